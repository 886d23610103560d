// Small helpers for the fakes' node:http handlers.

/**
 * @typedef {import('node:http').IncomingMessage} Request
 * @typedef {import('node:http').ServerResponse} Response
 */

/** Form posts and token requests are tiny; anything bigger is a mistake. */
const MAX_BODY_BYTES = 64 * 1024;

/**
 * @param {Response} res
 * @param {number} status
 * @param {unknown} body
 * @param {Record<string, string>} [headers]
 */
export function sendJson(res, status, body, headers = {}) {
	res.writeHead(status, {
		'content-type': 'application/json; charset=utf-8',
		'cache-control': 'no-store',
		...headers
	});
	res.end(JSON.stringify(body));
}

/**
 * @param {Response} res
 * @param {number} status
 * @param {string} html
 */
export function sendHtml(res, status, html) {
	res.writeHead(status, { 'content-type': 'text/html; charset=utf-8', 'cache-control': 'no-store' });
	res.end(html);
}

/**
 * @param {Response} res
 * @param {string} location
 */
export function redirect(res, location) {
	// 303: the browser follows a form POST with a GET.
	res.writeHead(303, { location, 'cache-control': 'no-store' });
	res.end();
}

/**
 * Reads the whole request body as text; rejects bodies over 64 KiB.
 * @param {Request} req
 * @returns {Promise<string>}
 */
export function readBody(req) {
	return new Promise((resolve, reject) => {
		/** @type {Buffer[]} */
		const chunks = [];
		let size = 0;
		req.on('data', (/** @type {Buffer} */ chunk) => {
			size += chunk.length;
			if (size > MAX_BODY_BYTES) {
				reject(new Error('request body too large'));
				req.destroy();
				return;
			}
			chunks.push(chunk);
		});
		req.on('end', () => resolve(Buffer.concat(chunks).toString('utf8')));
		req.on('error', reject);
	});
}

/** @param {string} value */
export function escapeHtml(value) {
	return value.replace(
		/[&<>"']/g,
		(c) => /** @type {Record<string, string>} */ ({ '&': '&amp;', '<': '&lt;', '>': '&gt;', '"': '&quot;', "'": '&#39;' })[c] ?? c
	);
}

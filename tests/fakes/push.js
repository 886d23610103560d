// Fake Web Push service (RFC 8030 message delivery, RFC 8291 aes128gcm payloads, RFC 8292 VAPID),
// on 127.0.0.1 only. Two sides:
//
//   HTTPS (its own port, self-signed certificate for IP 127.0.0.1), what web-push talks to:
//     POST /push/:id      a push message. 201 + Location when it decrypts; 410 for an unknown or
//                         expired subscription; 401 when the VAPID authorization is missing or
//                         fails a check; 400 for other bad requests; 413 over 4096 bytes;
//                         503 + Retry-After during a simulated outage.
//
//   plain HTTP (handled by server.js's FAKE_HTTP_PORT listener, through handleHttp):
//     POST   /push/subscriptions       a test subscription: { endpoint, expirationTime, keys: { p256dh, auth } }.
//                                      Body optional: { "applicationServerKey": "<VAPID public key>" }
//                                      makes it a restricted subscription (pushes signed by
//                                      another key get 401, as when an app changes its keys).
//     DELETE /push/subscriptions/:id   expire one (its endpoint answers 410 from then on)
//     POST   /push/outage             { "seconds": n }: the HTTPS side answers 503 for n seconds (0 ends it)
//     GET    /push/ca.pem             the certificate to trust (it is its own authority)
//     GET    /pushes[?endpoint=url]   decrypted pushes, newest first
//     DELETE /pushes                  forget them
//
// The fake keeps each subscription's ECDH private key and auth secret in memory, so it can read
// what arrives exactly as a browser would.
import { createECDH, createPublicKey, randomBytes, randomUUID, verify } from 'node:crypto';
import https from 'node:https';
import ece from 'http_ece';
import { generate } from 'selfsigned';
import { readBody, sendJson } from './http-util.js';

const HOST = '127.0.0.1';
/** RFC 8030 §7.2: a push service must accept payloads up to 4096 bytes (encrypted size). */
const MAX_PUSH_BYTES = 4096;
/** RFC 8292 §2: a JWT expiring more than 24 hours ahead may be refused. */
const MAX_JWT_SECONDS = 24 * 60 * 60;
const MAX_PUSHES = 1000;
const MAX_OUTAGE_SECONDS = 3600;
const URGENCIES = ['very-low', 'low', 'normal', 'high'];

/**
 * What `GET /pushes` returns, newest first. `json` is the parsed payload when it is JSON, else null.
 * @typedef {{
 *   id: string,
 *   endpoint: string,
 *   subscriptionId: string,
 *   payload: string,
 *   json: unknown,
 *   urgency: string,
 *   ttl: number,
 *   topic: string | null,
 *   receivedAt: string
 * }} StoredPush
 *
 * @typedef {{
 *   id: string,
 *   endpoint: string,
 *   ecdh: import('node:crypto').ECDH,
 *   p256dh: string,
 *   auth: string,
 *   applicationServerKey: string | null,
 *   expired: boolean
 * }} Subscription
 *
 * @typedef {Awaited<ReturnType<typeof createPushService>>} PushService
 */

class HttpProblem extends Error {
	/** @param {number} status @param {string} message */
	constructor(status, message) {
		super(message);
		this.status = status;
	}
}

/**
 * Reads the raw body; refuses more than `limit` bytes with 413.
 * @param {import('node:http').IncomingMessage} req
 * @param {number} limit
 * @returns {Promise<Buffer>}
 */
function readBytes(req, limit) {
	return new Promise((resolve, reject) => {
		/** @type {Buffer[]} */
		const chunks = [];
		let size = 0;
		let refused = false;
		req.on('data', (/** @type {Buffer} */ chunk) => {
			size += chunk.length;
			if (size > limit) {
				// Keep draining so the answer reaches the sender, but keep nothing.
				if (!refused) reject(new HttpProblem(413, `payload over ${limit} bytes`));
				refused = true;
				return;
			}
			chunks.push(chunk);
		});
		req.on('end', () => {
			if (!refused) resolve(Buffer.concat(chunks));
		});
		req.on('error', reject);
	});
}

/** @param {string} value */
function fromBase64url(value) {
	if (!/^[A-Za-z0-9_-]+={0,2}$/.test(value)) throw new HttpProblem(401, 'not base64url');
	return Buffer.from(value, 'base64url');
}

/**
 * `vapid t=<jwt>, k=<public key>` (RFC 8292 §3).
 * @param {string | undefined} header
 */
function parseVapidAuthorization(header) {
	if (!header) throw new HttpProblem(401, 'no Authorization header (VAPID)');
	const match = /^vapid\s+(.*)$/i.exec(header.trim());
	if (!match) throw new HttpProblem(401, 'Authorization is not the vapid scheme');
	/** @type {Record<string, string>} */
	const params = {};
	for (const part of (match[1] ?? '').split(',')) {
		const eq = part.indexOf('=');
		if (eq > 0) params[part.slice(0, eq).trim().toLowerCase()] = part.slice(eq + 1).trim();
	}
	if (!params.t || !params.k) throw new HttpProblem(401, 'vapid authorization needs t= and k=');
	return { token: params.t, key: params.k };
}

/**
 * The VAPID JWT's checks: ES256, signed by k, aud = this service's origin, exp ahead but not
 * more than 24 hours, sub present.
 * @param {string} token
 * @param {string} key base64url uncompressed P-256 point
 * @param {string} origin
 * @param {number} nowMs
 */
function checkVapidJwt(token, key, origin, nowMs) {
	const parts = token.split('.');
	if (parts.length !== 3) throw new HttpProblem(401, 'VAPID token is not a JWT');
	const [headerPart, claimsPart, signaturePart] = /** @type {[string, string, string]} */ (parts);
	/** @type {any} */
	let header;
	/** @type {any} */
	let claims;
	try {
		header = JSON.parse(fromBase64url(headerPart).toString('utf8'));
		claims = JSON.parse(fromBase64url(claimsPart).toString('utf8'));
	} catch {
		throw new HttpProblem(401, 'VAPID token parts are not JSON');
	}
	if (header?.alg !== 'ES256') throw new HttpProblem(401, `VAPID token alg must be ES256, not ${header?.alg}`);
	const point = fromBase64url(key);
	if (point.length !== 65 || point[0] !== 4) throw new HttpProblem(401, 'VAPID k is not an uncompressed P-256 key');
	const publicKey = createPublicKey({
		key: { kty: 'EC', crv: 'P-256', x: point.subarray(1, 33).toString('base64url'), y: point.subarray(33).toString('base64url') },
		format: 'jwk'
	});
	const signed = Buffer.from(`${headerPart}.${claimsPart}`);
	const good = verify('sha256', signed, { key: publicKey, dsaEncoding: 'ieee-p1363' }, fromBase64url(signaturePart));
	if (!good) throw new HttpProblem(401, 'VAPID signature does not verify with k');
	if (claims?.aud !== origin) throw new HttpProblem(401, `VAPID aud must be ${origin}, not ${claims?.aud}`);
	const now = Math.floor(nowMs / 1000);
	if (typeof claims.exp !== 'number' || claims.exp <= now) throw new HttpProblem(401, 'VAPID token has expired');
	if (claims.exp > now + MAX_JWT_SECONDS) throw new HttpProblem(401, 'VAPID exp is more than 24 hours ahead');
	if (typeof claims.sub !== 'string' || !/^(mailto:|https:)/.test(claims.sub)) {
		throw new HttpProblem(401, 'VAPID sub must be a mailto: or https: URL');
	}
}

/**
 * Makes the service: its certificate, HTTPS server (not listening yet) and the plain-HTTP routes.
 * @param {{ now?: () => number }} [options]
 */
export async function createPushService(options = {}) {
	const now = options.now ?? Date.now;
	const pems = await generate([{ name: 'commonName', value: 'Cellsitter fake push service' }], {
		keyType: 'ec',
		curve: 'P-256',
		algorithm: 'sha256',
		notBeforeDate: new Date(Date.now() - 60_000),
		notAfterDate: new Date(Date.now() + 30 * 24 * 60 * 60 * 1000),
		extensions: [
			// Its own authority: the app trusts this one certificate (GET /push/ca.pem).
			{ name: 'basicConstraints', cA: true },
			{ name: 'keyUsage', digitalSignature: true, keyCertSign: true },
			{ name: 'extKeyUsage', serverAuth: true },
			{ name: 'subjectAltName', altNames: [{ type: 7, ip: HOST }] }
		]
	});

	/** @type {Map<string, Subscription>} */
	const subscriptions = new Map();
	/** @type {StoredPush[]} newest first */
	let pushes = [];
	let outageUntil = 0;
	/** Set by listening(): `https://127.0.0.1:<port>`. */
	let origin = '';

	/**
	 * @param {import('node:http').IncomingMessage} req
	 * @param {import('node:http').ServerResponse} res
	 */
	async function handlePush(req, res) {
		const url = new URL(req.url ?? '/', origin || `https://${HOST}`);
		const match = /^\/push\/([A-Za-z0-9_-]+)$/.exec(url.pathname);
		if (!match) return sendJson(res, 404, { error: 'not found' });
		if (req.method !== 'POST') return sendJson(res, 405, { error: 'use POST' }, { allow: 'POST' });
		const wait = Math.ceil((outageUntil - now()) / 1000);
		if (wait > 0) {
			req.resume();
			return sendJson(res, 503, { error: 'simulated outage' }, { 'retry-after': String(wait) });
		}
		const subscription = subscriptions.get(match[1] ?? '');
		if (!subscription || subscription.expired) {
			req.resume();
			return sendJson(res, 410, { error: 'no such subscription (expired or never made)' });
		}
		const body = await readBytes(req, MAX_PUSH_BYTES);

		const { token, key } = parseVapidAuthorization(req.headers.authorization);
		checkVapidJwt(token, key, origin, now());
		if (subscription.applicationServerKey && subscription.applicationServerKey !== key) {
			throw new HttpProblem(401, 'signed with another VAPID key than the subscription was made for');
		}

		const ttlHeader = req.headers.ttl;
		if (typeof ttlHeader !== 'string' || !/^\d+$/.test(ttlHeader)) throw new HttpProblem(400, 'TTL header missing or not a whole number');
		const urgency = req.headers.urgency ?? 'normal';
		if (typeof urgency !== 'string' || !URGENCIES.includes(urgency)) throw new HttpProblem(400, `Urgency must be one of ${URGENCIES.join(', ')}`);
		const topic = req.headers.topic;
		if (topic !== undefined && (typeof topic !== 'string' || !/^[A-Za-z0-9_-]{1,32}$/.test(topic))) {
			throw new HttpProblem(400, 'Topic must be 1 to 32 base64url characters');
		}
		if (req.headers['content-encoding'] !== 'aes128gcm') throw new HttpProblem(400, 'Content-Encoding must be aes128gcm');
		if (body.length === 0) throw new HttpProblem(400, 'empty payload');

		let payload;
		try {
			payload = ece
				.decrypt(body, { version: 'aes128gcm', privateKey: subscription.ecdh, authSecret: subscription.auth })
				.toString('utf8');
		} catch (error) {
			throw new HttpProblem(400, `payload does not decrypt: ${error instanceof Error ? error.message : error}`);
		}
		let json = null;
		try {
			json = JSON.parse(payload);
		} catch {
			json = null;
		}
		/** @type {StoredPush} */
		const stored = {
			id: randomUUID(),
			endpoint: subscription.endpoint,
			subscriptionId: subscription.id,
			payload,
			json,
			urgency,
			ttl: Number(ttlHeader),
			topic: topic ?? null,
			receivedAt: new Date(now()).toISOString()
		};
		pushes.unshift(stored);
		pushes.length = Math.min(pushes.length, MAX_PUSHES);
		sendJson(res, 201, { id: stored.id }, { location: `${origin}/push/messages/${stored.id}` });
	}

	const server = https.createServer({ key: pems.private, cert: pems.cert }, (req, res) => {
		handlePush(req, res).catch((error) => {
			if (res.headersSent) return res.destroy();
			if (error instanceof HttpProblem) {
				req.resume();
				return sendJson(res, error.status, { error: error.message });
			}
			sendJson(res, 500, { error: String(error?.message ?? error) });
		});
	});

	/**
	 * Plain-HTTP routes; true when it answered.
	 * @param {import('node:http').IncomingMessage} req
	 * @param {import('node:http').ServerResponse} res
	 * @param {URL} url
	 * @returns {Promise<boolean>}
	 */
	async function handleHttp(req, res, url) {
		const path = url.pathname;
		if (path === '/pushes') {
			if (req.method === 'GET') {
				const endpoint = url.searchParams.get('endpoint');
				sendJson(res, 200, endpoint ? pushes.filter((p) => p.endpoint === endpoint) : pushes);
			} else if (req.method === 'DELETE') {
				pushes = [];
				sendJson(res, 200, { ok: true });
			} else sendJson(res, 405, { error: 'use GET or DELETE' }, { allow: 'GET, DELETE' });
			return true;
		}
		if (!path.startsWith('/push/')) return false;

		if (path === '/push/ca.pem') {
			if (req.method !== 'GET') sendJson(res, 405, { error: 'use GET' }, { allow: 'GET' });
			else {
				res.writeHead(200, { 'content-type': 'application/x-pem-file', 'cache-control': 'no-store' });
				res.end(pems.cert);
			}
			return true;
		}
		if (path === '/push/subscriptions') {
			if (req.method !== 'POST') {
				sendJson(res, 405, { error: 'use POST' }, { allow: 'POST' });
				return true;
			}
			/** @type {any} */
			let body = {};
			const text = await readBody(req);
			try {
				body = text.trim() ? JSON.parse(text) : {};
			} catch {
				sendJson(res, 400, { error: 'body must be JSON (or empty)' });
				return true;
			}
			const serverKey = body?.applicationServerKey;
			if (serverKey !== undefined && (typeof serverKey !== 'string' || !/^[A-Za-z0-9_-]{80,90}={0,2}$/.test(serverKey))) {
				sendJson(res, 400, { error: 'applicationServerKey must be a base64url P-256 public key' });
				return true;
			}
			const ecdh = createECDH('prime256v1');
			ecdh.generateKeys();
			const id = randomBytes(18).toString('base64url');
			/** @type {Subscription} */
			const subscription = {
				id,
				endpoint: `${origin}/push/${id}`,
				ecdh,
				p256dh: ecdh.getPublicKey().toString('base64url'),
				auth: randomBytes(16).toString('base64url'),
				applicationServerKey: serverKey ? serverKey.replace(/=+$/, '') : null,
				expired: false
			};
			subscriptions.set(id, subscription);
			sendJson(res, 201, {
				endpoint: subscription.endpoint,
				expirationTime: null,
				keys: { p256dh: subscription.p256dh, auth: subscription.auth }
			});
			return true;
		}
		const one = /^\/push\/subscriptions\/([A-Za-z0-9_-]+)$/.exec(path);
		if (one) {
			const subscription = subscriptions.get(one[1] ?? '');
			if (req.method !== 'DELETE') sendJson(res, 405, { error: 'use DELETE' }, { allow: 'DELETE' });
			else if (!subscription) sendJson(res, 404, { error: 'no such subscription' });
			else {
				subscription.expired = true;
				sendJson(res, 200, { ok: true });
			}
			return true;
		}
		if (path === '/push/outage') {
			if (req.method !== 'POST') {
				sendJson(res, 405, { error: 'use POST' }, { allow: 'POST' });
				return true;
			}
			/** @type {any} */
			let body;
			try {
				body = JSON.parse(await readBody(req));
			} catch {
				body = null;
			}
			const seconds = body?.seconds;
			if (typeof seconds !== 'number' || !Number.isFinite(seconds) || seconds < 0 || seconds > MAX_OUTAGE_SECONDS) {
				sendJson(res, 400, { error: `send { "seconds": n } with 0 ≤ n ≤ ${MAX_OUTAGE_SECONDS}` });
				return true;
			}
			outageUntil = now() + seconds * 1000;
			sendJson(res, 200, { until: new Date(outageUntil).toISOString() });
			return true;
		}
		return false;
	}

	return {
		server,
		/** The certificate's PEM (self-signed, IP SAN 127.0.0.1). */
		caPem: pems.cert,
		handleHttp,
		/**
		 * Call once the HTTPS server listens, with its port.
		 * @param {number} port
		 */
		listening(port) {
			origin = `https://${HOST}:${port}`;
			for (const s of subscriptions.values()) s.endpoint = `${origin}/push/${s.id}`;
		},
		/** @param {string | null} [endpoint] */
		list(endpoint) {
			return endpoint ? pushes.filter((p) => p.endpoint === endpoint) : [...pushes];
		}
	};
}

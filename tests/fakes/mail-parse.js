// Just enough of RFC 5322 / MIME to read what nodemailer sends: folded headers,
// encoded-words (RFC 2047) in headers, nested multiparts, and 7bit / 8bit /
// quoted-printable / base64 bodies in any charset TextDecoder knows.
//
// The raw message is handled as a "binary" string (one char per byte, latin1) so that
// byte offsets survive until a body is decoded with its own charset.

/**
 * @typedef {{ filename: string | null, contentType: string, size: number }} AttachmentInfo
 * @typedef {{
 *   from: string,
 *   to: string[],
 *   subject: string,
 *   text: string,
 *   html: string,
 *   messageId: string | null,
 *   attachments: AttachmentInfo[]
 * }} ParsedMail
 * @typedef {{ headers: Map<string, string[]>, body: string }} MimePart
 */

/**
 * Parses a raw RFC 822 message. Missing text or html bodies come back as ''.
 * @param {Buffer} raw
 * @returns {ParsedMail}
 */
export function parseMail(raw) {
	const root = parsePart(raw.toString('latin1'));
	/** @type {ParsedMail} */
	const mail = {
		from: decodeHeader(firstHeader(root, 'from')),
		to: splitAddressList(decodeHeader(firstHeader(root, 'to'))),
		subject: decodeHeader(firstHeader(root, 'subject')),
		text: '',
		html: '',
		messageId: firstHeader(root, 'message-id') || null,
		attachments: []
	};
	collectBodies(root, mail);
	return mail;
}

/**
 * Pulls the address out of `Name <a@b>` (or returns a bare address), lower-cased.
 * @param {string} value
 */
export function bareAddress(value) {
	const angle = /<([^>]*)>/.exec(value);
	return (angle ? angle[1] : value).trim().toLowerCase();
}

/** @param {string} binary */
function parsePart(binary) {
	const split = /\r?\n\r?\n/.exec(binary);
	const headerBlock = split ? binary.slice(0, split.index) : binary;
	const body = split ? binary.slice(split.index + split[0].length) : '';
	/** @type {Map<string, string[]>} */
	const headers = new Map();
	// Unfold: a line break followed by white space continues the previous header.
	for (const line of headerBlock.replace(/\r?\n(?=[ \t])/g, '').split(/\r?\n/)) {
		const colon = line.indexOf(':');
		if (colon <= 0) continue;
		const name = line.slice(0, colon).trim().toLowerCase();
		const list = headers.get(name) ?? [];
		list.push(line.slice(colon + 1).trim());
		headers.set(name, list);
	}
	return { headers, body };
}

/**
 * @param {MimePart} part
 * @param {string} name lower-case header name
 */
function firstHeader(part, name) {
	return part.headers.get(name)?.[0] ?? '';
}

/**
 * `type/subtype; a=b; c="d"` → { type, params } with lower-case names.
 * @param {string} value
 */
function parseParameterised(value) {
	const [head = '', ...rest] = splitOutsideQuotes(value, ';');
	/** @type {Record<string, string>} */
	const params = {};
	for (const piece of rest) {
		const eq = piece.indexOf('=');
		if (eq <= 0) continue;
		let v = piece.slice(eq + 1).trim();
		if (v.startsWith('"') && v.endsWith('"')) v = v.slice(1, -1).replace(/\\(.)/g, '$1');
		params[piece.slice(0, eq).trim().toLowerCase()] = v;
	}
	return { type: head.trim().toLowerCase(), params };
}

/**
 * @param {string} value
 * @param {string} separator one character
 */
function splitOutsideQuotes(value, separator) {
	/** @type {string[]} */
	const pieces = [];
	let current = '';
	let quoted = false;
	for (let i = 0; i < value.length; i++) {
		const c = value[i];
		if (c === '\\' && quoted) {
			current += c + (value[i + 1] ?? '');
			i++;
			continue;
		}
		if (c === '"') quoted = !quoted;
		if (c === separator && !quoted) {
			pieces.push(current);
			current = '';
		} else {
			current += c;
		}
	}
	pieces.push(current);
	return pieces;
}

/**
 * `A <a@x>, "B, C" <b@x>` → the two entries, trimmed.
 * @param {string} value
 */
function splitAddressList(value) {
	return splitOutsideQuotes(value, ',')
		.map((s) => s.trim())
		.filter(Boolean);
}

/**
 * Walks the MIME tree; the first inline text/plain and text/html win.
 * @param {MimePart} part
 * @param {ParsedMail} mail
 */
function collectBodies(part, mail) {
	const contentType = parseParameterised(firstHeader(part, 'content-type') || 'text/plain');
	if (contentType.type.startsWith('multipart/')) {
		const boundary = contentType.params.boundary;
		if (!boundary) return;
		for (const child of splitMultipart(part.body, boundary)) collectBodies(parsePart(child), mail);
		return;
	}
	const disposition = parseParameterised(firstHeader(part, 'content-disposition'));
	const transfer = firstHeader(part, 'content-transfer-encoding').toLowerCase();
	const charset = contentType.params.charset ?? 'utf-8';
	const isAttachment = disposition.type === 'attachment';
	if (!isAttachment && contentType.type === 'text/plain' && !mail.text) {
		mail.text = decodeText(decodeTransfer(part.body, transfer), charset);
	} else if (!isAttachment && contentType.type === 'text/html' && !mail.html) {
		mail.html = decodeText(decodeTransfer(part.body, transfer), charset);
	} else {
		const filename = disposition.params.filename ?? contentType.params.name ?? null;
		mail.attachments.push({
			filename: filename === null ? null : decodeHeader(filename),
			contentType: contentType.type,
			size: decodeTransfer(part.body, transfer).length
		});
	}
}

/**
 * The parts between `--boundary` lines, up to `--boundary--`. The line break before a
 * delimiter belongs to the delimiter, so it is not part of the body.
 * @param {string} body
 * @param {string} boundary
 */
function splitMultipart(body, boundary) {
	const delimiter = '--' + boundary;
	/** @type {string[]} */
	const parts = [];
	/** @type {string[] | null} */
	let current = null;
	for (const line of body.split(/\r?\n/)) {
		const trimmed = line.trimEnd();
		if (trimmed === delimiter + '--') break;
		if (trimmed === delimiter) {
			if (current) parts.push(current.join('\r\n'));
			current = [];
		} else if (current) {
			current.push(line);
		}
	}
	if (current) parts.push(current.join('\r\n'));
	return parts;
}

/**
 * Body text (binary string) → bytes.
 * @param {string} binary
 * @param {string} transfer content-transfer-encoding, lower case
 */
function decodeTransfer(binary, transfer) {
	if (transfer === 'base64') return Buffer.from(binary.replace(/[^A-Za-z0-9+/=]/g, ''), 'base64');
	if (transfer === 'quoted-printable') return decodeQuotedPrintable(binary);
	return Buffer.from(binary, 'latin1');
}

/** @param {string} binary */
function decodeQuotedPrintable(binary) {
	const soft = binary.replace(/[ \t]+(?=\r?\n)/g, '').replace(/=\r?\n/g, '');
	/** @type {number[]} */
	const bytes = [];
	for (let i = 0; i < soft.length; i++) {
		const hex = soft.slice(i + 1, i + 3);
		if (soft[i] === '=' && /^[0-9A-Fa-f]{2}$/.test(hex)) {
			bytes.push(parseInt(hex, 16));
			i += 2;
		} else {
			bytes.push(soft.charCodeAt(i) & 0xff);
		}
	}
	return Buffer.from(bytes);
}

/**
 * @param {Uint8Array} bytes
 * @param {string} charset
 */
function decodeText(bytes, charset) {
	let decoder;
	try {
		decoder = new TextDecoder(charset.toLowerCase());
	} catch {
		decoder = new TextDecoder('utf-8');
	}
	// Normalise line ends so tests can match text without caring about CRLF.
	return decoder.decode(bytes).replace(/\r\n/g, '\n');
}

/**
 * A header value (binary string) → text: raw 8-bit is read as UTF-8, then RFC 2047
 * encoded-words are decoded. White space between two encoded-words is dropped.
 * @param {string} value
 */
export function decodeHeader(value) {
	const utf8 = Buffer.from(value, 'latin1').toString('utf8');
	return utf8
		.replace(/(\?=)\s+(?==\?)/g, '$1')
		.replace(/=\?([^?]+)\?([BbQq])\?([^?]*)\?=/g, (_, charset, encoding, encoded) => {
			const bytes =
				encoding.toUpperCase() === 'B'
					? Buffer.from(encoded, 'base64')
					: decodeQuotedPrintable(String(encoded).replace(/_/g, ' '));
			return decodeText(bytes, String(charset).split('*')[0] ?? 'utf-8');
		});
}

// Fake SMTP server: accepts every message on 127.0.0.1 (no auth, no TLS) and keeps it
// in the mailbox instead of delivering it. Messages are read with mailparser (MIME,
// encoded words, charsets), the same parser a real mail client library would use.
import { simpleParser } from 'mailparser';
import { SMTPServer } from 'smtp-server';

/** Larger than any mail the app sends; the app's uploads never travel by mail. */
const MAX_MESSAGE_BYTES = 25 * 1024 * 1024;

/**
 * `Name <a@b>` or `a@b` for each address of a header, '' addresses (groups) left out.
 * @param {import('mailparser').AddressObject | import('mailparser').AddressObject[] | undefined} header
 * @returns {string[]}
 */
function addresses(header) {
	const objects = header === undefined ? [] : Array.isArray(header) ? header : [header];
	return objects.flatMap((object) =>
		object.value
			.filter((a) => a.address)
			.map((a) => (a.name ? `${a.name} <${a.address}>` : String(a.address)))
	);
}

/**
 * @param {import('./mailbox.js').Mailbox} mailbox
 * @returns {SMTPServer}
 */
export function createSmtpServer(mailbox) {
	return new SMTPServer({
		secure: false,
		authOptional: true,
		disabledCommands: ['STARTTLS', 'AUTH'],
		hideSTARTTLS: true,
		logger: false,
		banner: 'Cellsitter fake SMTP (messages are kept, never delivered)',
		size: MAX_MESSAGE_BYTES,
		onData(stream, session, callback) {
			/** @type {Buffer[]} */
			const chunks = [];
			stream.on('data', (/** @type {Buffer} */ chunk) => chunks.push(chunk));
			stream.on('error', callback);
			stream.on('end', () => {
				if (stream.sizeExceeded) {
					callback(Object.assign(new Error('Message too large'), { responseCode: 552 }));
					return;
				}
				simpleParser(Buffer.concat(chunks), { skipImageLinks: true })
					.then((mail) => {
						const envelopeFrom = session.envelope.mailFrom ? session.envelope.mailFrom.address : '';
						mailbox.add({
							from: addresses(mail.from)[0] ?? envelopeFrom,
							to: session.envelope.rcptTo.map((r) => r.address),
							headerTo: addresses(mail.to),
							subject: mail.subject ?? '',
							messageId: mail.messageId ?? '',
							text: mail.text ?? '',
							html: typeof mail.html === 'string' ? mail.html : '',
							attachments: mail.attachments.map((a) => ({
								filename: a.filename ?? null,
								contentType: a.contentType,
								size: a.size
							}))
						});
						callback();
					})
					.catch((/** @type {unknown} */ error) => callback(error instanceof Error ? error : new Error(String(error))));
			});
		}
	});
}

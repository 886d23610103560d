// Fake SMTP server: accepts every message on 127.0.0.1 (no auth, no TLS) and keeps it
// in the mailbox instead of delivering it.
import { SMTPServer } from 'smtp-server';
import { parseMail } from './mail-parse.js';

/** Larger than any mail the app sends; the app's uploads never travel by mail. */
const MAX_MESSAGE_BYTES = 25 * 1024 * 1024;

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
				try {
					const mail = parseMail(Buffer.concat(chunks));
					const envelopeFrom = session.envelope.mailFrom ? session.envelope.mailFrom.address : '';
					mailbox.add({
						from: mail.from || envelopeFrom,
						to: session.envelope.rcptTo.map((r) => r.address),
						headerTo: mail.to,
						subject: mail.subject,
						text: mail.text,
						html: mail.html,
						attachments: mail.attachments
					});
					callback();
				} catch (error) {
					callback(error instanceof Error ? error : new Error(String(error)));
				}
			});
		}
	});
}

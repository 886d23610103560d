import nodemailer, { type Transporter } from 'nodemailer';
import { serverEnv } from './env';

/** `messageId`: a fixed Message-ID, so that a message sent again is the same message to mail programs. */
export type Mail = { to: string; subject: string; text: string; html?: string; messageId?: string };

let transport: { url: string; transporter: Transporter } | undefined;

function transporter(url: string): Transporter {
	if (transport?.url !== url) {
		transport?.transporter.close();
		transport = {
			url,
			// Short timeouts: a mail server that does not answer should fail a job (and be retried),
			// not hold it for nodemailer's default two minutes.
			transporter: nodemailer.createTransport({ url, connectionTimeout: 5_000, greetingTimeout: 5_000, socketTimeout: 15_000 })
		};
	}
	return transport.transporter;
}

/** True when an SMTP server is configured (or the local fake is on). */
export function canSendMail(): boolean {
	return Boolean(serverEnv().SMTP_URL);
}

/** A verified server stays trusted this long (ms), so a burst of requests checks it once. */
const READY_FOR_MS = 60_000;
let verifiedAt: { url: string; at: number } | undefined;

/**
 * True when mail is configured and the SMTP server answers (connection, greeting and, with
 * credentials, login), checked at most once a minute while it keeps answering.
 */
export async function mailServerReady(now = Date.now()): Promise<boolean> {
	const url = serverEnv().SMTP_URL;
	if (!url) return false;
	if (verifiedAt?.url === url && now - verifiedAt.at < READY_FOR_MS) return true;
	try {
		await transporter(url).verify();
		verifiedAt = { url, at: now };
		return true;
	} catch (e) {
		verifiedAt = undefined;
		console.error('mail server not ready:', e instanceof Error ? e.message : e);
		return false;
	}
}

/** Sends one message through SMTP_URL; throws when mail is not configured or the server refuses. */
export async function sendMail(mail: Mail): Promise<void> {
	const env = serverEnv();
	if (!env.SMTP_URL) throw new Error('No SMTP server is configured (SMTP_URL).');
	await transporter(env.SMTP_URL).sendMail({ from: env.MAIL_FROM, ...mail });
}

export function escapeHtml(text: string): string {
	return text.replace(/[&<>"']/g, (c) => `&#${c.charCodeAt(0)};`);
}

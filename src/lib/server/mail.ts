import nodemailer, { type Transporter } from 'nodemailer';
import { serverEnv } from './env';

let transport: Transporter | undefined;

export type Mail = { to: string; subject: string; text: string; html?: string };

/** True when an SMTP server is configured (or the local fake is on). */
export function canSendMail(): boolean {
	return Boolean(serverEnv().SMTP_URL);
}

/** Sends one message through SMTP_URL; throws when mail is not configured or the server refuses. */
export async function sendMail(mail: Mail): Promise<void> {
	const env = serverEnv();
	if (!env.SMTP_URL) throw new Error('No SMTP server is configured (SMTP_URL).');
	transport ??= nodemailer.createTransport(env.SMTP_URL);
	await transport.sendMail({ from: env.MAIL_FROM, ...mail });
}

export function escapeHtml(text: string): string {
	return text.replace(/[&<>"']/g, (c) => `&#${c.charCodeAt(0)};`);
}

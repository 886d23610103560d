/** Small helpers for integration tests: unique accounts, the fake mailbox. */
import { randomUUID } from 'node:crypto';
import { signUp } from '$lib/server/accounts';

/** An e-mail no other test (or earlier run against the same database) uses. */
export function uniqueEmail(label: string): string {
	return `${label}-${randomUUID().slice(0, 8)}@tests.cellsitter.test`;
}

export async function signUpOwner(label = 'owner', password = 'correct horse battery') {
	const email = uniqueEmail(label);
	const result = await signUp({
		email,
		name: `Test ${label}`,
		password,
		workshop: { name: `Bench ${label}`, timeZone: 'Europe/Berlin' }
	});
	if (!result.ok) throw new Error(`sign-up failed: ${result.reason}`);
	return { ...result, email, password };
}

export type CaughtMail = { to: string[]; subject: string; text: string };

/** Messages the fake SMTP server caught for an address, newest first. */
export async function mailTo(address: string): Promise<CaughtMail[]> {
	const response = await fetch(`${process.env.FAKES_URL}/messages?to=${encodeURIComponent(address)}`);
	return (await response.json()) as CaughtMail[];
}

/** The first link in a message's text that contains `path`. */
export function linkIn(mail: CaughtMail, path: string): string {
	const link = mail.text.match(/https?:\/\/\S+/g)?.find((l) => l.includes(path));
	if (!link) throw new Error(`no ${path} link in "${mail.subject}"`);
	return link;
}

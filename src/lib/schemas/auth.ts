import { z } from 'zod';
import { roles } from '$lib/permissions';
import { lineText } from './text';

export function isTimeZone(value: string): boolean {
	try {
		new Intl.DateTimeFormat('en', { timeZone: value });
		return true;
	} catch {
		return false;
	}
}

const email = z
	.string()
	.trim()
	.min(1, 'Enter your e-mail address.')
	.max(254, 'That e-mail address is too long.')
	.pipe(z.email('Enter a valid e-mail address, like name@example.com.'))
	.transform((v) => v.toLowerCase());

const newPassword = z
	.string()
	.min(10, 'Use at least 10 characters.')
	.max(200, 'Use at most 200 characters.');

const personName = lineText(100, { required: 'Enter your name.' });

export const workshopName = lineText(80, { required: 'Name the workshop.' });

export const timeZone = z
	.string()
	.trim()
	.min(1, 'Choose a time zone.')
	.refine(isTimeZone, 'Choose a time zone from the list, like Europe/London.');

export const signInSchema = z.object({
	email,
	password: z.string().min(1, 'Enter your password.').max(200, 'That password is too long.'),
	next: z.string().default('')
});

export const signUpSchema = z.object({
	name: personName,
	email,
	password: newPassword,
	workshopName: workshopName.default('My workshop'),
	timeZone: timeZone.default('UTC'),
	invitation: z.string().default('')
});

export const oauthSignUpSchema = z.object({
	name: personName,
	workshopName: workshopName.default('My workshop'),
	timeZone: timeZone.default('UTC'),
	invitation: z.string().default('')
});

export const forgotSchema = z.object({ email });

export const resetSchema = z
	.object({ password: newPassword, confirm: z.string() })
	.refine((v) => v.password === v.confirm, { message: 'The two passwords differ.', path: ['confirm'] });

export const inviteSchema = z.object({
	email,
	role: z.enum(roles, 'Choose a role.')
});

/** A record id as newId() makes them; anything else never reaches a query. */
const recordId = z.string().regex(/^[a-z2-7]{24}$/, 'Choose a member.');

export const roleChangeSchema = z.object({
	userId: recordId,
	role: z.enum(roles, 'Choose a role.')
});

export const memberSchema = z.object({ userId: recordId });

export const invitationIdSchema = z.object({ invitationId: z.string().regex(/^[a-z2-7]{24}$/, 'Choose an invitation.') });

export const workshopSchema = z.object({ name: workshopName, timeZone });

/** Stand-in origin to resolve `next` against: reserved (RFC 2606 `.invalid`), so any value that
 * names a host of its own — absolute, protocol-relative, or spelt with `\\` — lands elsewhere. */
const SITE = 'https://cellsitter.invalid';
/** Longer than any path of ours; a cap keeps a hostile value out of cookies and headers. */
const NEXT_MAX = 2048;
/** C0 controls, DEL, C1 controls (a browser drops tab/LF/CR inside a URL), and `\` (read as `/`). */
const UNSAFE = /[\u0000-\u001f\u007f-\u009f\\]/;

/**
 * Where to go after signing in: only a path on this site, returned in its URL-serialised form
 * (printable ASCII, so a Location header can carry it). Anything else gives `fallback`.
 * Percent-escapes are decoded repeatedly before the checks, so `%09`, `%5C`, `%2F%2F` and their
 * doubly-encoded forms are refused like the characters they stand for.
 */
export function safeNext(next: string | null | undefined, fallback = '/'): string {
	if (!next || next.length > NEXT_MAX) return fallback;
	let decoded = next;
	for (let round = 0; round < 4; round++) {
		if (UNSAFE.test(decoded) || !decoded.startsWith('/') || decoded.startsWith('//')) return fallback;
		let once: string;
		try {
			once = decodeURIComponent(decoded);
		} catch {
			return fallback;
		}
		if (once === decoded) break;
		if (round === 3) return fallback;
		decoded = once;
	}
	let url: URL;
	try {
		url = new URL(next, SITE);
	} catch {
		return fallback;
	}
	if (url.origin !== SITE) return fallback;
	return url.pathname + url.search + url.hash;
}

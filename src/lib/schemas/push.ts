/**
 * A browser's push subscription as it crosses to the server (PushSubscription.toJSON(): endpoint
 * and the two keys in base64url). The keys are checked for their exact size: p256dh is an
 * uncompressed P-256 public key (65 bytes, first byte 0x04), auth a 16-byte secret (RFC 8291,
 * section 3). A trailing `=` padding is accepted and dropped, so the server keeps one spelling.
 */
import { z } from 'zod';
import { lineText } from './text';

/** Endpoints longer than this are refused (the database's check is the same). */
export const MAX_ENDPOINT_CHARS = 2000;
/** How many devices one person may register for push. */
export const MAX_PUSH_DEVICES = 20;

const base64url = /^[A-Za-z0-9_-]+$/;

/** The bytes of unpadded base64url text, or null when it is not that. */
export function base64urlBytes(text: string): Uint8Array | null {
	if (!base64url.test(text) || text.length % 4 === 1) return null;
	const standard = text.replace(/-/g, '+').replace(/_/g, '/');
	let binary: string;
	try {
		binary = atob(standard + '='.repeat((4 - (standard.length % 4)) % 4));
	} catch {
		return null;
	}
	const bytes = Uint8Array.from(binary, (c) => c.charCodeAt(0));
	// Only one spelling per value: the unused low bits of the last character must be zero.
	const again = btoa(binary).replace(/\+/g, '-').replace(/\//g, '_').replace(/=+$/, '');
	return again === text ? bytes : null;
}

function key(name: string, bytes: number, check?: (b: Uint8Array) => boolean, checkMessage?: string) {
	const chars = Math.ceil((bytes * 8) / 6);
	const wrong = `The ${name} key must be ${bytes} bytes in base64url (${chars} characters of A–Z, a–z, 0–9, - and _), as the browser's subscription gives it.`;
	return z
		.string({ error: `Send the subscription's ${name} key.` })
		.transform((v) => v.replace(/={1,2}$/, ''))
		.superRefine((v, ctx) => {
			const decoded = base64urlBytes(v);
			if (!decoded || decoded.length !== bytes) ctx.addIssue({ code: 'custom', message: wrong });
			else if (check && !check(decoded)) ctx.addIssue({ code: 'custom', message: checkMessage ?? wrong });
		});
}

const endpoint = z
	.string({ error: "Send the subscription's endpoint (an https:// address)." })
	.max(MAX_ENDPOINT_CHARS, `The endpoint may be at most ${MAX_ENDPOINT_CHARS} characters.`)
	.refine((v) => {
		try {
			const url = new URL(v);
			return v.startsWith('https://') && url.protocol === 'https:' && !url.username && !url.password;
		} catch {
			return false;
		}
	}, 'The endpoint must be a whole https:// address, as the browser gives it.');

export const pushSubscriptionInputSchema = z.object({
	endpoint,
	keys: z.object(
		{
			p256dh: key('p256dh', 65, (b) => b[0] === 4, 'The p256dh key must be an uncompressed P-256 public key (its first byte 0x04).'),
			auth: key('auth', 16)
		},
		{ error: 'Send the keys as { p256dh, auth }.' }
	),
	label: lineText(80, { tooLong: 'Name the device in at most 80 characters.' }).optional()
});
export type PushSubscriptionInput = z.output<typeof pushSubscriptionInputSchema>;

export const pushUnsubscribeSchema = z.object({ endpoint });

import { sha256 } from '@oslojs/crypto/sha2';
import { encodeBase32LowerCaseNoPadding, encodeHexLowerCase } from '@oslojs/encoding';

/** A random id: 120 bits, base32, lower case. */
export function newId(): string {
	return encodeBase32LowerCaseNoPadding(crypto.getRandomValues(new Uint8Array(15)));
}

/** A random secret for links sent by e-mail: 160 bits. */
export function newToken(): string {
	return encodeBase32LowerCaseNoPadding(crypto.getRandomValues(new Uint8Array(20)));
}

/** What the database keeps of a token: its SHA-256, hex. */
export function hashToken(token: string): string {
	return encodeHexLowerCase(sha256(new TextEncoder().encode(token)));
}

/**
 * Headers every answer carries (hooks.server.ts). Pages get their Content-Security-Policy from
 * SvelteKit (`kit.csp` in svelte.config.js, with a nonce per response); docs/security.md.
 */
import { isSecureContext } from './auth/session';

/** One year, this host only: a workshop's other names (a NAS, a printer) may not speak HTTPS. */
export const STRICT_TRANSPORT_SECURITY = 'max-age=31536000';

/** For answers that are not pages (JSON, CSV, events, zips): they load nothing and sit in no frame. */
export const NON_PAGE_CSP = "default-src 'none'; frame-ancestors 'none'";

/**
 * HSTS only when the origin is https: and not loopback: over plain HTTP a browser ignores it, and
 * on 127.0.0.1 / localhost it would pin every other local program on that name to HTTPS for a year.
 * `url` is the request's URL as SvelteKit sees it (adapter-node builds it from ORIGIN).
 */
export function wantsStrictTransportSecurity(url: URL): boolean {
	return url.protocol === 'https:' && isSecureContext(url);
}

/** Sets the headers on a response; a Content-Security-Policy already there (a page's, an attachment's) stays. */
export function applySecurityHeaders(headers: Headers, url: URL): void {
	headers.set('X-Content-Type-Options', 'nosniff');
	headers.set('Referrer-Policy', 'same-origin');
	headers.set('X-Frame-Options', 'DENY');
	headers.set('Permissions-Policy', 'camera=(self), geolocation=(), microphone=()');
	if (wantsStrictTransportSecurity(url)) headers.set('Strict-Transport-Security', STRICT_TRANSPORT_SECURITY);
	const type = headers.get('content-type') ?? '';
	if (!headers.has('content-security-policy') && !type.startsWith('text/html')) {
		headers.set('Content-Security-Policy', NON_PAGE_CSP);
	}
}

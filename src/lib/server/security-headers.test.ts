import { describe, expect, it } from 'vitest';
import { applySecurityHeaders, wantsStrictTransportSecurity } from './security-headers';

const hsts = (origin: string) => wantsStrictTransportSecurity(new URL(`${origin}/w/bench/packs`));

describe('HSTS only off loopback over https', () => {
	it('is sent for an https origin with a real name or a LAN address', () => {
		expect(hsts('https://bench.example.org')).toBe(true);
		expect(hsts('https://192.168.1.20:3443')).toBe(true);
		// A name that merely starts like a loopback address is not one.
		expect(hsts('https://127.example.org')).toBe(true);
	});

	it('is never sent over plain HTTP, wherever the server is', () => {
		expect(hsts('http://bench.example.org')).toBe(false);
		expect(hsts('http://192.168.1.20:3000')).toBe(false);
	});

	it('is never sent to loopback, even over https', () => {
		for (const origin of ['https://127.0.0.1:3443', 'https://localhost', 'https://[::1]:3443', 'https://127.0.1.1']) {
			expect(hsts(origin), origin).toBe(false);
		}
	});
});

describe('applySecurityHeaders', () => {
	it('keeps a page’s or an attachment’s own policy and gives other answers a closed one', () => {
		const attachment = new Headers({ 'content-type': 'image/png', 'content-security-policy': 'sandbox' });
		applySecurityHeaders(attachment, new URL('https://bench.example.org/x'));
		expect(attachment.get('content-security-policy')).toBe('sandbox');
		expect(attachment.get('strict-transport-security')).toBe('max-age=31536000');

		const json = new Headers({ 'content-type': 'application/json' });
		applySecurityHeaders(json, new URL('http://127.0.0.1:3000/api/w/bench/packs'));
		expect(json.get('content-security-policy')).toBe("default-src 'none'; frame-ancestors 'none'");
		expect(json.get('strict-transport-security')).toBeNull();
		expect(json.get('x-content-type-options')).toBe('nosniff');
		expect(json.get('x-frame-options')).toBe('DENY');
		expect(json.get('referrer-policy')).toBe('same-origin');
	});
});

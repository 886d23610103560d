import { describe, expect, it } from 'vitest';
import { safeNext } from './auth';

// Hostile values: the open-redirect shapes of the OWASP "Unvalidated Redirects and Forwards Cheat
// Sheet" and the WHATWG URL parser's treatment of backslashes, tabs and line breaks (a browser
// drops tab/LF/CR from a URL and reads `\` as `/`, so `/\evil.example` and `/\t/evil.example`
// both mean `//evil.example`, another host).
const hostile: [string, string][] = [
	['protocol-relative', '//evil.example'],
	['protocol-relative with path', '//evil.example/packs'],
	['three slashes', '///evil.example'],
	['backslash after slash', '/\\evil.example'],
	['backslash first', '\\\\evil.example'],
	['encoded backslash', '/%5Cevil.example'],
	['encoded backslash, lower case', '/%5cevil.example'],
	['doubly encoded backslash', '/%255Cevil.example'],
	['encoded tab', '/%09/evil.example'],
	['doubly encoded tab', '/%2509/evil.example'],
	['encoded line feed', '/%0a/evil.example'],
	['encoded carriage return', '/%0D/evil.example'],
	['raw tab', '/\t/evil.example'],
	['raw line feed', '/\n/evil.example'],
	['raw carriage return', '/\r/evil.example'],
	['header injection', '/packs\r\nSet-Cookie: x=1'],
	['NUL', '/packs\u0000'],
	['encoded NUL', '/packs%00'],
	['DEL', '/packs\u007f'],
	['C1 control', '/packs\u0085'],
	['encoded slash pair', '/%2F%2Fevil.example'],
	['encoded slash after slash', '/%2Fevil.example'],
	['doubly encoded slash', '/%252F%252Fevil.example'],
	['absolute https', 'https://evil.example'],
	['absolute http', 'http://evil.example/login'],
	['scheme-less host', 'evil.example'],
	['javascript scheme', 'javascript:alert(document.domain)'],
	['javascript scheme after slash trick', '/\\javascript:alert(1)'],
	['data scheme', 'data:text/html,<script>alert(1)</script>'],
	['user info', '//user@evil.example'],
	['leading space', ' //evil.example'],
	['broken percent escape', '/packs%E0%A4%A'],
	['relative path', 'packs'],
	['dot path', './packs']
];

const good: [string, string][] = [
	['/', '/'],
	['/account', '/account'],
	['/w/larkfield/packs', '/w/larkfield/packs'],
	['/w/larkfield/packs/4/cells?view=table', '/w/larkfield/packs/4/cells?view=table'],
	['/invite/abc_DEF-123', '/invite/abc_DEF-123'],
	['/w/larkfield/packs#notes', '/w/larkfield/packs#notes'],
	// Non-ASCII comes back percent-encoded, so it can stand in a Location header.
	['/w/zellen-bänk/packs', '/w/zellen-b%C3%A4nk/packs']
];

describe('safeNext keeps a redirect on this site', () => {
	it.each(hostile)('refuses %s', (_, value) => {
		expect(safeNext(value)).toBe('/');
		expect(safeNext(value, '')).toBe('');
	});

	it.each(good)('keeps the path %s', (value, expected) => {
		expect(safeNext(value)).toBe(expected);
	});

	it('uses the fallback for nothing', () => {
		expect(safeNext(null)).toBe('/');
		expect(safeNext(undefined, '/account')).toBe('/account');
		expect(safeNext('', '')).toBe('');
	});

	it('refuses an overlong value', () => {
		expect(safeNext('/' + 'a'.repeat(4000))).toBe('/');
	});

	it('only ever returns printable ASCII (a header can carry it)', () => {
		for (const [, value] of [...hostile, ...good]) expect(safeNext(value)).toMatch(/^[\x21-\x7e]+$/);
	});
});

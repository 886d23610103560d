import { describe, expect, it } from 'vitest';
import { actions, load } from '../../src/routes/(auth)/login/+page.server';
import { PAIR_FAILURES } from '$lib/server/auth/rate-limit';
import { signUpOwner } from './helpers';

type Ev = Parameters<typeof actions.default>[0];

/** Posts the sign-in form as a browser at `address` would; returns the result and the headers set. */
async function postSignIn(email: string, password: string, address: string, next = '') {
	const headers: Record<string, string> = {};
	const url = new URL('http://127.0.0.1:3100/login');
	const body = new URLSearchParams({ email, password, next });
	const event = {
		url,
		request: new Request(url, { method: 'POST', body, headers: { 'content-type': 'application/x-www-form-urlencoded' } }),
		cookies: { set: () => {}, get: () => undefined, delete: () => {} },
		getClientAddress: () => address,
		setHeaders: (h: Record<string, string>) => Object.assign(headers, h),
		locals: { user: null, session: null }
	} as unknown as Ev;
	try {
		return { result: (await actions.default(event)) as { status?: number } | undefined, headers };
	} catch (thrown) {
		return { result: thrown as { status?: number; location?: string }, headers };
	}
}

describe('the sign-in form', () => {
	it('answers 429 with Retry-After once an account has failed 5 times from one address', async () => {
		const owner = await signUpOwner('http-limit');
		const address = `203.0.113.7-${crypto.randomUUID().slice(0, 6)}`; // RFC 5737 documentation range
		for (let i = 0; i < PAIR_FAILURES; i++) {
			const { result } = await postSignIn(owner.email, 'not it at all', address);
			expect(result?.status).toBe(400);
		}
		const { result, headers } = await postSignIn(owner.email, owner.password, address);
		expect(result?.status).toBe(429);
		expect(Number(headers['Retry-After'])).toBeGreaterThan(0);

		// From another address the right password still gets in (a redirect to the app).
		const elsewhere = await postSignIn(owner.email, owner.password, `${address}-home`);
		expect(elsewhere.result).toMatchObject({ status: 303 });
	});
});

// Open-redirect shapes (OWASP Unvalidated Redirects cheat sheet; WHATWG URL reads `\\` as `/` and
// drops tab/LF/CR), and values a Location header cannot carry (they used to give a 500).
const hostileNext = [
	'//evil.example',
	'/\\evil.example',
	'/%09/evil.example',
	'/%5Cevil.example',
	'/%252F%252Fevil.example',
	'https://evil.example',
	'javascript:alert(1)',
	'/\t/evil.example',
	'/packs\r\nSet-Cookie: stolen=1',
	'/packs\u0000'
];

describe('where sign-in leads', () => {
	it.each(hostileNext)('a next of %j lands on the app, never elsewhere', async (next) => {
		const owner = await signUpOwner('next');
		const { result } = await postSignIn(owner.email, owner.password, `203.0.113.8-${crypto.randomUUID().slice(0, 6)}`, next);
		expect(result).toMatchObject({ status: 303, location: '/' });
	});

	it('a next on this site is followed', async () => {
		const owner = await signUpOwner('next-good');
		const target = `/w/${owner.workshopSlug}/packs?view=table`;
		const { result } = await postSignIn(owner.email, owner.password, `203.0.113.9-${crypto.randomUUID().slice(0, 6)}`, target);
		expect(result).toMatchObject({ status: 303, location: target });
	});

	it('a signed-in visit to /login with a hostile next goes home, and a header can carry where', async () => {
		for (const next of hostileNext) {
			const url = new URL('http://127.0.0.1:3100/login');
			url.searchParams.set('next', next);
			const event = { url, locals: { user: { id: 'u', email: 'a@b.test', name: 'A' }, session: null } };
			const thrown = await (load as unknown as (e: unknown) => Promise<unknown>)(event).then(
				() => null,
				(e: unknown) => e as { status?: number; location?: string }
			);
			expect(thrown).toMatchObject({ status: 303, location: '/' });
			expect(() => new Headers({ location: (thrown as { location: string }).location })).not.toThrow();
		}
	});
});

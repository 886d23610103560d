import { expect, test, type APIResponse, type Page, type Response } from '@playwright/test';
import { PASSWORD, plannedSession, signUp, uniqueEmail } from './helpers';

// The headers every answer carries, the Content-Security-Policy SvelteKit writes (svelte.config.js,
// a nonce per page) and the pages that must work under it with no violation in Chromium's console,
// and SvelteKit's CSRF check turning away a form posted from another origin (docs/security.md).
test.setTimeout(120_000);

type Headers = Record<string, string>;

/** The directives of a Content-Security-Policy header, by name. */
function directives(csp: string): Map<string, string[]> {
	return new Map(
		csp
			.split(';')
			.map((d) => d.trim().split(/\s+/))
			.filter((parts) => parts[0])
			.map(([name, ...values]) => [name, values])
	);
}

/** The headers the hooks add to every answer on loopback (so no HSTS: tests run on plain HTTP 127.0.0.1). */
function expectCommonHeaders(headers: Headers, what: string) {
	expect(headers['x-content-type-options'], what).toBe('nosniff');
	expect(headers['referrer-policy'], what).toBe('same-origin');
	expect(headers['x-frame-options'], what).toBe('DENY');
	expect(headers['strict-transport-security'], what).toBeUndefined();
}

/** A page's policy: nonce-only scripts, no framing, no plugins, forms and <base> to our origin only. */
function expectPagePolicy(response: Response | APIResponse | null, what: string): string {
	expect(response, what).not.toBeNull();
	const headers = response!.headers();
	expectCommonHeaders(headers, what);
	const policy = directives(headers['content-security-policy'] ?? '');
	const scripts = policy.get('script-src') ?? [];
	expect(scripts, what).toContain("'self'");
	expect(scripts, what).not.toContain("'unsafe-inline'");
	expect(scripts, what).not.toContain("'unsafe-eval'");
	const nonces = scripts.filter((s) => /^'nonce-[A-Za-z0-9+/=]{16,}'$/.test(s));
	expect(nonces, what).toHaveLength(1);
	expect(policy.get('frame-ancestors'), what).toEqual(["'none'"]);
	expect(policy.get('object-src'), what).toEqual(["'none'"]);
	expect(policy.get('base-uri'), what).toEqual(["'self'"]);
	expect(policy.get('form-action'), what).toEqual(["'self'"]);
	expect(policy.get('connect-src'), what).toEqual(["'self'"]);
	expect(policy.get('style-src-elem'), what).toEqual(["'self'"]);
	return nonces[0].slice("'nonce-".length, -1);
}

/** Collects Chromium's CSP reports from the console and uncaught errors, across every page the tab opens. */
function watch(page: Page) {
	const violations: string[] = [];
	const errors: string[] = [];
	page.on('console', (message) => {
		if (/Content Security Policy/i.test(message.text())) violations.push(`${page.url()}: ${message.text()}`);
	});
	page.on('pageerror', (error) => errors.push(`${page.url()}: ${error.message}`));
	return { violations, errors };
}

test('pages carry a nonce policy their own scripts run under; an injected script is refused', async ({ page }) => {
	const seen = watch(page);

	const landing = await page.goto('/');
	const nonce = expectPagePolicy(landing, 'landing page');
	// Every inline script of the page (SvelteKit's start-up, app.html's theme) carries this answer's nonce.
	const html = await landing!.text();
	const scripts = [...html.matchAll(/<script\b([^>]*)>/g)].map((m) => m[1]);
	expect(scripts.length).toBeGreaterThanOrEqual(2);
	for (const attributes of scripts) {
		if (/\bsrc=/.test(attributes)) continue;
		expect(attributes).toContain(`nonce="${nonce}"`);
	}
	// A fresh nonce per answer: one an attacker read from an old page opens nothing.
	expect(expectPagePolicy(await page.request.get('/'), 'landing page again')).not.toBe(nonce);

	// The theme script in app.html runs (it alone applies a saved theme before first paint).
	await page.evaluate(() => localStorage.setItem('cellsitter-theme', 'dark'));
	await page.reload();
	await expect(page.locator('html')).toHaveAttribute('data-theme', 'dark');

	const signIn = await page.goto('/login');
	expectPagePolicy(signIn, 'sign-in page');
	await expect(page.getByRole('button', { name: 'Sign in' })).toBeVisible();
	await page.goto('/signup');
	await expect(page.getByLabel('Workshop name')).toBeVisible();
	expect(seen.violations).toEqual([]);
	expect(seen.errors).toEqual([]);

	// The check above can fail: a script put into the page without the nonce does not run, and
	// Chromium says so in the console.
	const ran = await page.evaluate(async () => {
		const script = document.createElement('script');
		script.textContent = 'window.__injected = true';
		document.body.append(script);
		await new Promise((r) => setTimeout(r, 100));
		return (window as unknown as { __injected?: boolean }).__injected === true;
	});
	expect(ran).toBe(false);
	await expect.poll(() => seen.violations.length).toBeGreaterThan(0);
	expect(seen.violations.join('\n')).toContain('script-src');
});

test('a form posted from another origin gets 403 and changes nothing', async ({ page, baseURL }) => {
	const email = uniqueEmail('csrf');
	await signUp(page, { name: 'Casey Cross', email, workshop: 'Cross Bench' });

	const foreign = { origin: 'http://evil.example', 'content-type': 'application/x-www-form-urlencoded' };
	const login = await page.request.post('/login', { headers: foreign, data: `email=${encodeURIComponent(email)}&password=${encodeURIComponent(PASSWORD)}` });
	expect(login.status()).toBe(403);
	expect(await login.text()).toContain('Cross-site POST form submissions are forbidden');

	// Signing out from another site's form is refused too: the session survives it.
	const logout = await page.request.post('/logout', { headers: foreign, data: '', maxRedirects: 0 });
	expect(logout.status()).toBe(403);
	expect((await page.request.get('/account', { maxRedirects: 0 })).status()).toBe(200);

	// The same form from our own origin goes through (so the 403 above is the origin's doing).
	const own = await page.request.post('/logout', {
		headers: { ...foreign, origin: new URL(baseURL!).origin },
		data: '',
		maxRedirects: 0
	});
	expect(own.status()).not.toBe(403);
	expect((await page.request.get('/account', { maxRedirects: 0 })).status()).not.toBe(200);
});

test('the app’s pages run under the policy with no violation: plan, run screen, pack, labels, report', async ({ page }) => {
	const seen = watch(page);
	const slug = await signUp(page, { name: 'Sam Strict', email: uniqueEmail('csp'), workshop: 'Strict Bench' });
	const sessionId = await plannedSession(page, slug);

	// An API answer: the common headers and a policy that loads nothing.
	const api = await page.request.get(`/api/w/${slug}/packs`);
	expect(api.status()).toBe(200);
	expectCommonHeaders(api.headers(), 'API answer');
	expect(api.headers()['content-security-policy']).toBe("default-src 'none'; frame-ancestors 'none'");

	// The plan: its timeline's bars are placed by style attributes, which the policy lets through.
	expectPagePolicy(await page.goto(`/w/${slug}/sessions/${sessionId}/plan`), 'plan page');
	const bar = page.locator('div[title].absolute').first();
	await expect(bar).toBeAttached();
	expect(await bar.evaluate((el) => (el as HTMLElement).style.left)).toMatch(/%$/);
	expectPagePolicy(await page.goto(`/w/${slug}/sessions/${sessionId}`), 'session page');

	// The run screen, its live connection (server-sent events) and a reading arriving on it.
	await page.getByRole('button', { name: 'Start session' }).click();
	await expect(page.getByText('Running', { exact: true })).toBeVisible();
	await expect(page.getByRole('status').filter({ hasText: 'Live: new readings appear here' })).toBeVisible({ timeout: 15_000 });
	const posted = await page.request.post(`/api/w/${slug}/sessions/${sessionId}/readings`, {
		data: { readings: [{ clientId: 'csp-1', groupIndex: 1, takenAt: new Date().toISOString(), volts: 3.71 }] }
	});
	expect(posted.status()).toBe(201);
	await expect(page.getByTestId('volts-summary')).toContainText('3.71', { timeout: 15_000 });

	// The pack page, its QR labels (inline SVG from qrcode) and the session's printable report.
	await page.getByRole('link', { name: 'Run trial' }).click();
	await expect(page.getByRole('heading', { name: 'Run trial' })).toBeVisible();
	await page.getByRole('link', { name: 'QR labels' }).click();
	await expect(page.getByRole('list', { name: 'Labels' }).locator('svg').first()).toBeVisible();
	expectPagePolicy(await page.reload(), 'labels page');
	expectPagePolicy(await page.goto(`/w/${slug}/sessions/${sessionId}/report`), 'session report');
	await expect(page.getByRole('heading', { level: 1, name: /Run trial/ })).toBeVisible();

	expect(seen.violations).toEqual([]);
	expect(seen.errors).toEqual([]);
});

import { expect, test } from '@playwright/test';
import { PASSWORD, signIn, signOut, signUp, uniqueEmail } from './helpers';

test('sign up, sign out, sign in again', async ({ page }) => {
	const email = uniqueEmail('journey');
	const slug = await signUp(page, { name: 'Rowan Tester', email, workshop: 'Rowan Bench' });
	await expect(page.getByRole('heading', { name: 'Packs', exact: true })).toBeVisible();
	await expect(page.getByLabel(/Workshop: Rowan Bench/)).toBeVisible();

	await signOut(page);
	await page.goto(`/w/${slug}/packs`);
	await expect(page).toHaveURL(/\/login\?next=/);

	await page.getByLabel('E-mail').fill(email);
	await page.getByLabel('Password').fill(PASSWORD);
	await page.getByRole('button', { name: 'Sign in' }).click();
	// Back where they were going.
	await expect(page).toHaveURL(new RegExp(`/w/${slug}/packs$`));
});

test('a wrong password shows an error and keeps the person signed out', async ({ page }) => {
	const email = uniqueEmail('wrongpw');
	await signUp(page, { name: 'Wren Tester', email, workshop: 'Wren Bench' });
	await signOut(page);
	await signIn(page, email, 'not the password at all');
	await expect(page.getByRole('alert')).toContainText('do not match');
	await expect(page).toHaveURL(/\/login/);
	await page.goto('/account');
	await expect(page).toHaveURL(/\/login\?next=%2Faccount/);
});

test('sign-up shows field errors in plain words', async ({ page }) => {
	await page.goto('/signup');
	await page.getByLabel('E-mail').fill('not-an-address');
	await page.getByLabel('Password').fill('short');
	await page.getByRole('button', { name: 'Create account and workshop' }).click();
	await expect(page.getByText('Enter your name.')).toBeVisible();
	await expect(page.getByText('Enter a valid e-mail address')).toBeVisible();
	await expect(page.getByText('Use at least 10 characters.')).toBeVisible();
});

test('a next leading off the site lands in the app instead', async ({ page, baseURL }) => {
	const email = uniqueEmail('offsite');
	const slug = await signUp(page, { name: 'Ossian Tester', email, workshop: 'Ossian Bench' });
	await signOut(page);
	// Open-redirect shapes (OWASP Unvalidated Redirects cheat sheet): a browser reads `\\` as `/`
	// and drops a tab or line break, so each of these would name another host.
	await page.goto(`/login?next=${encodeURIComponent('/\\evil.example')}`);
	await page.getByLabel('E-mail').fill(email);
	await page.getByLabel('Password').fill(PASSWORD);
	await page.getByRole('button', { name: 'Sign in' }).click();
	await expect(page).toHaveURL(new RegExp(`/w/${slug}/packs$`));

	// Signed in, /login sends a visitor straight on: the same refusal, and no 500 for a line break.
	const app = new URL(baseURL!).origin;
	for (const next of ['//evil.example', '/%09/evil.example', '/%5Cevil.example', 'https://evil.example', '/packs\r\nX: 1']) {
		const response = await page.goto(`/login?next=${encodeURIComponent(next)}`);
		expect(response?.status()).toBe(200);
		expect(new URL(page.url()).origin).toBe(app);
		await expect(page).toHaveURL(new RegExp(`/w/${slug}/packs$`));
	}
});

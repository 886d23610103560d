import { expect, test } from '@playwright/test';
import { signIn, signUp, uniqueEmail } from './helpers';

test('a builder who forgot the password gets a link by e-mail and signs in with a new one', async ({ page }) => {
	// Five pages and a background job's polling interval: more than one short journey's time.
	test.slow();
	const email = uniqueEmail('forgot');
	await signUp(page, { name: 'Fern Forgetful', email, workshop: 'Forgetful Bench' });
	// Another browser, signed out: the one where the password is not remembered.
	await page.context().clearCookies();

	await page.goto('/login');
	await expect(page.getByRole('link', { name: 'Forgot your password?' })).toHaveAttribute('href', '/forgot');
	await page.goto('/forgot');
	await page.getByLabel('E-mail').fill(email);
	await page.getByRole('button', { name: 'Send the link' }).click();
	await expect(page.getByText(`If ${email} has an account, a reset link is on its way.`)).toBeVisible();

	// The mail goes out from a background job: look again until it is there.
	let href = '';
	await expect(async () => {
		await page.goto(`/fakes/mailbox?to=${encodeURIComponent(email)}`);
		const link = page.getByRole('article').first().getByRole('link').filter({ hasText: '/reset/' });
		await expect(link).toBeVisible({ timeout: 1_000 });
		href = (await link.getAttribute('href'))!;
	}).toPass({ timeout: 20_000 });
	// The link points at the server the tests run against (its ORIGIN), not anywhere a request said.
	expect(new URL(href).origin).toBe(new URL(page.url()).origin);

	await page.goto(href);
	await page.getByLabel('New password').fill('a fresh bench password');
	await page.getByLabel('The same again').fill('a fresh bench password');
	await page.getByRole('button', { name: 'Save the new password' }).click();
	// Hashing the new password (argon2id) takes a moment on a busy machine.
	await expect(page).toHaveURL(/\/login\?notice=reset-done$/, { timeout: 20_000 });

	await signIn(page, email, 'a fresh bench password');
	await expect(page).toHaveURL(/\/w\/[a-z0-9-]+\/packs$/, { timeout: 20_000 });
});

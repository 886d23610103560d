import { expect, test } from '@playwright/test';
import { signOut, uniqueEmail } from './helpers';

test('sign in through the local OAuth provider, first time and again', async ({ page }) => {
	const email = uniqueEmail('oauth');
	await page.goto('/login');
	await page.getByRole('link', { name: /Sign in with Local test provider/ }).click();

	// The fake provider's own page (authorize → code; state and PKCE are checked on the way back).
	await page.getByLabel('E-mail').fill(email);
	await page.getByLabel('Display name').fill('Oakley Provider');
	await page.getByRole('button', { name: 'Continue' }).click();

	await expect(page).toHaveURL(/\/signup\/oauth/);
	await expect(page.getByText(`Signed in as ${email}`)).toBeVisible();
	await page.getByLabel('Workshop name').fill('Oakley Bench');
	await page.getByRole('button', { name: 'Create my workshop' }).click();
	await expect(page).toHaveURL(/\/w\/oakley-bench(-\d+)?\/packs$/);

	await signOut(page);
	await page.getByRole('link', { name: /Sign in with Local test provider/ }).click();
	await page.getByLabel('E-mail').fill(email);
	await page.getByRole('button', { name: 'Continue' }).click();
	await expect(page).toHaveURL(/\/w\/oakley-bench(-\d+)?\/packs$/);
});

test('an OAuth identity with an e-mail already in use must sign in with the password first', async ({ page }) => {
	const email = uniqueEmail('taken');
	await page.goto('/signup');
	await page.getByLabel('Your name').fill('Taken Already');
	await page.getByLabel('E-mail').fill(email);
	await page.getByLabel('Password').fill('a sturdy bench password');
	await page.getByLabel('Workshop name').fill('Taken Bench');
	await page.getByRole('button', { name: 'Create account and workshop' }).click();
	await expect(page).toHaveURL(/\/packs$/);
	await signOut(page);

	await page.getByRole('link', { name: /Sign in with Local test provider/ }).click();
	await page.getByLabel('E-mail').fill(email);
	await page.getByRole('button', { name: 'Continue' }).click();
	await expect(page).toHaveURL(/\/login\?notice=needs-password/);
	await expect(page.getByText('An account with that e-mail already exists')).toBeVisible();
});

test('the provider buttons use our words and the configured name', async ({ page }) => {
	await page.goto('/login');
	await expect(page.getByRole('link', { name: 'Sign in with Local test provider' })).toBeVisible();
	await expect(page.getByText(/continue with|generic oauth/i)).toHaveCount(0);
	await page.goto('/signup');
	await expect(page.getByRole('link', { name: 'Sign up with Local test provider' })).toBeVisible();
	await expect(page.getByText(/continue with|generic oauth/i)).toHaveCount(0);
});

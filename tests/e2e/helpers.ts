import { randomUUID } from 'node:crypto';
import { expect, type Page } from '@playwright/test';

/** Each test signs up its own accounts, so the sign-in rate limit never makes a test flaky. */
export function uniqueEmail(label: string): string {
	return `${label}-${randomUUID().slice(0, 8)}@e2e.cellsitter.test`;
}

export const PASSWORD = 'a sturdy bench password';

/** Signs up through the form and lands in the new workshop; returns its slug. */
export async function signUp(page: Page, opts: { name: string; email: string; workshop: string }) {
	await page.goto('/signup');
	await page.getByLabel('Your name').fill(opts.name);
	await page.getByLabel('E-mail').fill(opts.email);
	await page.getByLabel('Password').fill(PASSWORD);
	await page.getByLabel('Workshop name').fill(opts.workshop);
	await page.getByRole('button', { name: 'Create account and workshop' }).click();
	await expect(page).toHaveURL(/\/w\/[a-z0-9-]+\/packs$/);
	return new URL(page.url()).pathname.split('/')[2];
}

export async function signOut(page: Page) {
	await page.getByLabel(/Account menu/).click();
	await page.getByRole('button', { name: 'Sign out' }).click();
	await expect(page).toHaveURL(/\/login$/);
}

export async function signIn(page: Page, email: string, password = PASSWORD) {
	await page.goto('/login');
	await page.getByLabel('E-mail').fill(email);
	await page.getByLabel('Password').fill(password);
	await page.getByRole('button', { name: 'Sign in' }).click();
}

/** The first link to `path` in the newest message the local fake mailbox holds for `to`. */
export async function linkFromMailbox(page: Page, to: string, path: string): Promise<string> {
	await page.goto(`/fakes/mailbox?to=${encodeURIComponent(to)}`);
	const link = page.getByRole('article').first().getByRole('link').filter({ hasText: path });
	await expect(link).toBeVisible();
	return (await link.getAttribute('href'))!;
}

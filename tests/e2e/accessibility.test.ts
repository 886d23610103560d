import { expect, test } from '@playwright/test';
import { expectAccessible } from './axe';
import { plannedSession, signUp, uniqueEmail } from './helpers';

// axe takes a few seconds a page on two shared cores: these tests get more than the default 30 s.
test('the signed-out pages pass axe in light and dark', async ({ page }) => {
	test.setTimeout(120_000);
	for (const path of ['/', '/login', '/signup', '/forgot']) await expectAccessible(page, path);
});

test('the pages a builder uses pass axe in light and dark', async ({ page }) => {
	test.setTimeout(300_000);

	const slug = await signUp(page, { name: 'Ada Access', email: uniqueEmail('a11y'), workshop: 'Access Bench' });
	await page.goto(`/w/${slug}/cell-specs/new`);
	await page.getByLabel('Name').fill('A11y 18650');
	await page.getByLabel('Capacity (Ah)').fill('3');
	await page.getByLabel('Max charge current (A)').fill('1.5');
	await page.getByLabel('Max continuous discharge (A)').fill('10');
	await page.getByRole('button', { name: 'Save cell spec' }).click();
	await expect(page.getByRole('cell', { name: 'A11y 18650' })).toBeVisible();
	await page.goto(`/w/${slug}/packs/new`);
	await page.getByLabel('Pack name').fill('A11y pack');
	await page.getByRole('button', { name: 'Create pack' }).click();
	await expect(page.getByRole('heading', { name: 'A11y pack' })).toBeVisible();
	const pack = new URL(page.url()).pathname;

	for (const path of [
		`/w/${slug}/packs`,
		pack,
		`${pack}/cells`,
		`${pack}/matching`,
		`/w/${slug}/packs/new`,
		`/w/${slug}/cell-specs`,
		`/w/${slug}/chargers`,
		`/w/${slug}/chargers/new`,
		`/w/${slug}/chemistries`,
		`/w/${slug}/chemistries/new`,
		`/w/${slug}/sessions`,
		`/w/${slug}/alerts`,
		`/w/${slug}/workshop`,
		`/w/${slug}/workshop/members`,
		'/account'
	]) {
		await expectAccessible(page, path);
	}
});

test('the session pages pass axe in light and dark, the run screen on a phone too', async ({ page }) => {
	test.setTimeout(300_000);
	const slug = await signUp(page, { name: 'Sam Session', email: uniqueEmail('a11y-session'), workshop: 'Session Access Bench' });
	const sessionId = await plannedSession(page, slug);
	const session = `/w/${slug}/sessions/${sessionId}`;
	for (const path of [`/w/${slug}/sessions`, `/w/${slug}/sessions/new`, session, `${session}/plan`, `${session}/upload`, `${session}/devices`, `${session}/report`]) {
		await expectAccessible(page, path);
	}
	await page.setViewportSize({ width: 390, height: 844 });
	await expectAccessible(page, session);
});

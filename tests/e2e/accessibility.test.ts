import { expect, test, type Page } from '@playwright/test';
import { expectAccessible } from './axe';
import { plannedSession, signUp, uniqueEmail } from './helpers';

// The pages a new account sees — signed out, the forms, a planned session — through axe in both
// themes on a desktop and on a phone. Pages with real content are in accessibility-demo.test.ts.
// axe takes a few seconds a page on two shared cores: these tests get more than the default 30 s.
const SIZES = [
	{ width: 1280, height: 800 },
	{ width: 390, height: 844 }
];

async function bothSizes(page: Page, paths: string[]) {
	for (const size of SIZES) {
		await page.setViewportSize(size);
		for (const path of paths) await expectAccessible(page, path, `${size.width}×${size.height}`);
	}
}

test('the signed-out pages pass axe in light and dark, desktop and phone', async ({ page }) => {
	test.setTimeout(120_000);
	await bothSizes(page, ['/', '/login', '/signup', '/forgot', '/reset/not-a-real-token']);
});

test('the forms a builder fills pass axe in light and dark, desktop and phone', async ({ page }) => {
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

	// The forms, and a pack with no cells yet (the demo's filled pages are in accessibility-demo.test.ts).
	await bothSizes(page, [
		`/w/${slug}/packs/new`,
		`/w/${slug}/cell-specs/new`,
		`/w/${slug}/chargers/new`,
		`/w/${slug}/chemistries/new`,
		`/w/${slug}/packs`,
		pack
	]);
});

test('a planned session, its plan and the plan form pass axe in light and dark, desktop and phone', async ({ page }) => {
	test.setTimeout(300_000);
	const slug = await signUp(page, { name: 'Sam Session', email: uniqueEmail('a11y-session'), workshop: 'Session Access Bench' });
	const sessionId = await plannedSession(page, slug);
	const session = `/w/${slug}/sessions/${sessionId}`;
	await bothSizes(page, [`/w/${slug}/sessions/new`, session, `${session}/plan`]);
});

import { expect, test, type Locator } from '@playwright/test';
import jsQR from 'jsqr';
import sharp from 'sharp';
import { PASSWORD, plannedSession, signUp, uniqueEmail } from './helpers';

// The bench's QR labels on a phone: the builder starts a session of a 4S pack, opens the pack's
// label sheet, and a code read back from a screenshot (jsQR, not our code) leads a signed-out
// phone through sign-in to the running session's reading entry for that very group.
test.use({ viewport: { width: 390, height: 844 } });
// Sign-up, a pack, a plan and two phones: more than the default 30 s on a busy two-core machine.
test.setTimeout(120_000);

/** The text of the QR code in an element's screenshot, as a camera app would read it. */
async function readCode(label: Locator): Promise<string> {
	const png = await label.screenshot();
	const { data, info } = await sharp(png).ensureAlpha().raw().toBuffer({ resolveWithObject: true });
	const code = jsQR(new Uint8ClampedArray(data.buffer, data.byteOffset, data.length), info.width, info.height);
	expect(code, 'a QR code in the label').not.toBeNull();
	return code!.data;
}

test('a group label scanned by a signed-out phone opens that group’s entry in the running session', async ({ page, browser, baseURL }) => {
	const email = uniqueEmail('labels');
	const slug = await signUp(page, { name: 'Lee Labeller', email, workshop: 'Label Bench' });
	const sessionId = await plannedSession(page, slug);
	await page.goto(`/w/${slug}/sessions/${sessionId}`);
	await page.getByRole('button', { name: 'Start session' }).click();
	await expect(page.getByText('Running', { exact: true })).toBeVisible();

	await page.getByRole('link', { name: 'Run trial' }).click();
	await page.getByRole('link', { name: 'QR labels' }).click();
	await expect(page.getByRole('heading', { name: 'QR labels' })).toBeVisible();
	await expect(page.getByRole('button', { name: 'Print labels' })).toBeVisible();
	const sheet = page.getByRole('list', { name: 'Labels' });
	await expect(sheet.getByRole('listitem')).toHaveCount(5);
	const label = sheet.getByRole('listitem', { name: 'Label for group 3' });
	await expect(label).toContainText('Run trial');
	await expect(label).toContainText('Group 3');

	const scanned = await readCode(label);
	// The code holds an absolute link from the server's ORIGIN, so another device can open it.
	expect(new URL(scanned).origin).toBe(new URL(baseURL!).origin);
	expect(new URL(scanned).pathname).toMatch(new RegExp(`^/w/${slug}/packs/[a-z2-7]{24}/g/3$`));
	await expect(label).toContainText(scanned.replace(/^https?:\/\//, ''));

	// On paper: only the labels, each about 58 mm wide with its code at least 35 mm across.
	await page.emulateMedia({ media: 'print' });
	await expect(page.getByRole('navigation', { name: 'Main (phone)' })).toBeHidden();
	await expect(page.getByRole('button', { name: 'Print labels' })).toBeHidden();
	const mm = 96 / 25.4;
	const box = (await label.boundingBox())!;
	expect(box.width).toBeGreaterThan(55 * mm);
	expect(box.width).toBeLessThan(61 * mm);
	const code = (await label.getByRole('img', { name: /^QR code for group 3/ }).boundingBox())!;
	expect(Math.min(code.width, code.height)).toBeGreaterThanOrEqual(35 * mm);
	await page.emulateMedia({ media: 'screen' });

	// Another phone, signed out, follows the code: sign-in first, then straight to group 3's entry.
	const phone = await browser.newContext({ viewport: { width: 390, height: 844 }, baseURL });
	const scanner = await phone.newPage();
	await scanner.goto(scanned);
	await expect(scanner).toHaveURL(/\/login\?next=/);
	await scanner.getByLabel('E-mail').fill(email);
	await scanner.getByLabel('Password').fill(PASSWORD);
	await scanner.getByRole('button', { name: 'Sign in' }).click();
	await expect(scanner).toHaveURL(new RegExp(`/w/${slug}/sessions/${sessionId}\\?group=3#log-readings$`));
	const entry = scanner.getByRole('region', { name: 'Log readings' });
	await expect(entry.getByRole('button', { name: 'One group' })).toHaveAttribute('aria-pressed', 'true');
	await expect(entry.getByLabel('Group', { exact: true })).toHaveValue('3');
	await expect(entry.getByLabel('G3 volts per cell')).toBeInViewport();

	// The pack's own label opens the whole-pack entry of the same session.
	await scanner.goto(await readCode(sheet.getByRole('listitem', { name: 'Label for the pack' })));
	await expect(scanner).toHaveURL(new RegExp(`/sessions/${sessionId}\\?entry=pack#log-readings$`));
	await expect(entry.getByRole('button', { name: 'Whole pack' })).toHaveAttribute('aria-pressed', 'true');
	await phone.close();
});

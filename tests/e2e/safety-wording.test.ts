import { expect, test, type Page } from '@playwright/test';
import { unwatchedChargeSentences } from '../../src/lib/safety-wording';
import { signUp, uniqueEmail } from './helpers';

// The dev server (E2E_BASE_URL) reloads every open page when any source file changes; its HMR
// socket is left unconnected so a run against it keeps its own pages. The built server has none.
test.beforeEach(async ({ context }) => {
	await context.addInitScript(() => {
		const Native = window.WebSocket;
		window.WebSocket = function (url: string | URL, protocols?: string | string[]) {
			if (String(protocols ?? '').includes('vite')) return Object.assign(new EventTarget(), { readyState: 0, send() {}, close() {} });
			return new Native(url, protocols);
		} as unknown as typeof WebSocket;
	});
});

/** Opens a page and waits until its scripts have run, so typing reaches the page's own state. */
async function open(page: Page, path: string) {
	await page.goto(path);
	await page.waitForLoadState('networkidle');
}

/** The full safety note's points (issue 7, item 20; references.md §8), each as words a reader sees. */
async function expectFullSafetyNote(page: Page) {
	const note = page.getByRole('complementary', { name: 'Safety before charging' });
	await expect(note).toBeVisible();
	for (const words of [/awake and present/, /non-flammable surface/, /hot, swells, smells or leaks/, /never charge a damaged/i, /datasheet comes first/, /local codes/]) {
		await expect(note).toContainText(words);
	}
	// One note to a page: the shell's short one stays out where the page shows the full one.
	await expect(page.getByRole('complementary', { name: 'Safety', exact: true })).toHaveCount(0);
}

test('the landing page promises no unwatched charge and says what works today', async ({ page }) => {
	await page.goto('/');
	const text = (await page.getByRole('main').innerText()).replace(/\s+/g, ' ');
	expect(unwatchedChargeSentences(text)).toEqual([]);
	expect(text).toMatch(/awake and present/);
	// Every point works today (alerts came last); alerts never stand in for the person at the bench.
	const alerts = page.getByRole('heading', { name: 'Alerts from the readings' }).locator('..');
	await expect(alerts).toContainText('Ready now');
	await expect(alerts).toContainText('never stand in for someone awake at the bench');
	await expect(page.getByText('Being built')).toHaveCount(0);
	await expect(page.getByRole('complementary', { name: 'Safety before charging' })).toBeVisible();
});

test('cautions sit where the risk is: sessions, chargers, packs and chemistry profiles', async ({ page }) => {
	test.setTimeout(240_000);
	const slug = await signUp(page, { name: 'Sol Safety', email: uniqueEmail('safety'), workshop: 'Safety Bench' });

	await open(page, `/w/${slug}/sessions`);
	await expectFullSafetyNote(page);
	await open(page, `/w/${slug}/packs`);
	await expect(page.getByRole('complementary', { name: 'Safety', exact: true })).toBeVisible();

	await open(page, `/w/${slug}/chargers/new`);
	await expectFullSafetyNote(page);
	await page.getByLabel('Kind').selectOption('bench-supply');
	await expect(page.getByRole('note', { name: 'End of charge' })).toContainText('does not stop by itself');

	await open(page, `/w/${slug}/cell-specs/new`);
	await page.getByLabel('Name').fill('Safety 21700');
	await page.getByLabel('Chemistry').selectOption('builtin:nmc');
	await page.getByLabel('Capacity (Ah)').fill('4');
	await page.getByLabel('Max charge current (A)').fill('4');
	await page.getByLabel('Max continuous discharge (A)').fill('15');
	await page.getByRole('button', { name: 'Save cell spec' }).click();
	await expect(page.getByRole('cell', { name: 'Safety 21700' })).toBeVisible();

	// 16S NMC: 16 × 4.20 V (BU-216 full charge) = 67.2 V, above the 60 V DC touch-safety line
	// (common practice); 14S is 58.8 V, below it.
	await open(page, `/w/${slug}/packs/new`);
	await page.getByLabel('Pack name').fill('Safety pack');
	const preview = page.getByRole('region', { name: 'Preview' });
	await page.getByLabel('Cells per group (P)').fill('1');
	await page.getByLabel('Groups in series (S)').fill('16');
	await expect(preview).toContainText('16S1P');
	await expect(preview).toContainText('67.2');
	await expect(preview.getByRole('note', { name: 'Shock hazard' })).toContainText(/insulated tools.*one hand.*covered.*local electrical codes/s);
	await page.getByLabel('Groups in series (S)').fill('14');
	await expect(preview).toContainText('58.8');
	await expect(preview.getByRole('note', { name: 'Shock hazard' })).toHaveCount(0);
	await expect(preview.getByRole('note', { name: 'No BMS' })).toContainText('every group');

	// 2S1P, two cells matched, then the topology changes: the pack page says the matching was cleared.
	await page.getByLabel('Groups in series (S)').fill('2');
	await expect(preview).toContainText('2S1P');
	await page.getByRole('button', { name: 'Create pack' }).click();
	// A form that saves and moves on: on a busy machine the dev server may take a while.
	await expect(page.getByRole('heading', { name: 'Safety pack' })).toBeVisible({ timeout: 30_000 });
	await expect(page.getByText(/Safety 21700, NMC \(lithium nickel manganese cobalt oxide\)/)).toBeVisible();
	const packUrl = page.url();
	await open(page, `${packUrl}/cells`);
	// The chemistry's name carries its own parentheses: never a second pair around it.
	await expect(page.getByText(/cells measured for 2S1P, NMC \(lithium nickel manganese cobalt oxide\):/)).toBeVisible();
	// Chosen again until the page has taken it (a file chosen before the page's scripts ran is lost).
	await expect(async () => {
		await page.getByLabel('CSV file of cell measurements').setInputFiles({
			name: 'two.csv',
			mimeType: 'text/csv',
			// Invented arrival measurements of two healthy cells.
			buffer: Buffer.from('label;volts;resistance_mohm;capacity_ah\r\nA1;3,601;16,1;4,00\r\nA2;3,603;16,2;4,01', 'utf8')
		});
		await page.getByRole('button', { name: 'Import 2 cells' }).click({ timeout: 5_000 });
	}).toPass({ timeout: 60_000 });
	await expect(page.getByRole('table', { name: 'Cells of this batch' }).getByRole('row')).toHaveCount(3, { timeout: 30_000 });
	await open(page, `${packUrl}/matching`);
	await page.getByRole('button', { name: 'Propose a matching' }).click();
	await page.getByRole('button', { name: 'Accept this assignment' }).click();
	await expect(page.getByRole('status').filter({ hasText: /Saved: 2 cells in groups/ })).toBeVisible({ timeout: 30_000 });
	await open(page, `${packUrl}/edit`);
	await page.getByLabel('Groups in series (S)').fill('1');
	await page.getByLabel('Cells per group (P)').fill('2');
	await page.getByRole('button', { name: 'Save changes' }).click();
	await expect(page.getByRole('status').filter({ hasText: 'Matching cleared' })).toContainText('Match the cells again', { timeout: 30_000 });
});

test('a chemistry profile past the usual limits needs the datasheet confirmation, and the server checks it', async ({ page }) => {
	test.setTimeout(120_000);
	const slug = await signUp(page, { name: 'Cho Chemist', email: uniqueEmail('chem'), workshop: 'Chem Bench' });
	await open(page, `/w/${slug}/chemistries/new?from=nmc`);
	await page.getByLabel('Name', { exact: true }).fill('High-voltage 21700');
	// 4.35 V is past BU-216's 4.20 V full charge of the 4.2 V family.
	await page.getByLabel('Maximum charge (V)').fill('4.35');
	const beyond = page.getByRole('region', { name: 'Past the usual limits of its family' });
	await expect(beyond).toContainText(/4\.350\s?V, above the 4\.200\s?V/);

	// Charging below 0 °C: the plating caution (BU-410).
	await page.getByLabel('Charge from (°C)', { exact: true }).fill('-5');
	await expect(page.getByRole('note', { name: 'Charging below 0 °C' })).toContainText('plates lithium');
	await page.getByLabel('Charge from (°C)', { exact: true }).fill('0');

	// The form posts through the page's script: SvelteKit answers 200 with the action's own status inside.
	const answer = page.waitForResponse((r) => r.request().method() === 'POST');
	await page.getByRole('button', { name: 'Save profile' }).click();
	expect(await (await answer).json()).toMatchObject({ type: 'failure', status: 400 });
	await expect(beyond).toContainText(/datasheet allows this/);
	await expect(page).toHaveURL(/\/chemistries\/new/);

	await beyond.getByLabel('The cell maker’s datasheet allows this').check();
	await page.getByRole('button', { name: 'Save profile' }).click();
	await expect(page).toHaveURL(new RegExp(`/w/${slug}/chemistries$`), { timeout: 30_000 });
	await expect(page.getByRole('heading', { name: 'High-voltage 21700' })).toBeVisible();
});

import { expect, test } from '@playwright/test';
import { signUp, uniqueEmail } from './helpers';

// Units follow numbers after a thin space (look.md).
const thin = '\u2009';

test('a builder records a charger with two channels and sees their limits', async ({ page }) => {
	const slug = await signUp(page, { name: 'Rowan Vale', email: uniqueEmail('chargers'), workshop: 'Vale Bench' });
	await page.goto(`/w/${slug}/chargers`);
	await expect(page.getByRole('heading', { name: 'No chargers yet' })).toBeVisible();
	await page.getByRole('link', { name: 'Add a charger' }).click();

	await page.getByLabel('Name', { exact: true }).first().fill('Twin hobby charger');
	await page.getByLabel('Kind').selectOption({ label: 'Multi-channel charger' });
	await page.getByLabel('Notes').fill('160 W in all');

	const first = page.getByRole('group', { name: 'Channel 1' });
	await first.getByLabel('Maximum voltage (V)').fill('25.2');
	await first.getByLabel('Maximum current (A)').fill('6');
	await first.getByLabel('Power limit (W)').fill('80');
	await first.getByLabel('Balance current (A)').fill('0.3');
	await first.getByLabel('Cells in series, at most').fill('6');

	await page.getByRole('button', { name: 'Add a copy of channel 1' }).click();
	const second = page.getByRole('group', { name: 'Channel 2' });
	await expect(second.getByLabel('Maximum voltage (V)')).toHaveValue('25.2');
	await second.getByLabel('Maximum current (A)').fill('4');

	// A channel without a current limit is refused next to the field, and nothing is saved.
	await page.getByRole('button', { name: 'Add a channel' }).click();
	const third = page.getByRole('group', { name: 'Channel 3' });
	await page.getByRole('button', { name: 'Save charger' }).click();
	await expect(third.getByText('Enter the highest current this channel gives, in amps.')).toBeVisible();
	await page.getByRole('button', { name: 'Remove channel 3' }).click();
	await expect(page.getByRole('group', { name: 'Channel 3' })).toHaveCount(0);

	await page.getByRole('button', { name: 'Save charger' }).click();
	await expect(page).toHaveURL(new RegExp(`/w/${slug}/chargers$`));
	const channels = page.getByRole('list', { name: 'Channels of Twin hobby charger' }).getByRole('listitem');
	await expect(channels).toHaveCount(2);
	await expect(channels.nth(0)).toContainText('Channel 1');
	await expect(channels.nth(0)).toContainText(`up to 25.2${thin}V · 6${thin}A · 80${thin}W`);
	await expect(channels.nth(0)).toContainText(`balance 0.3${thin}A · up to 6S`);
	await expect(channels.nth(1)).toContainText('Channel 2');
	await expect(channels.nth(1)).toContainText(`up to 25.2${thin}V · 4${thin}A · 80${thin}W`);
	await expect(page.getByText('Multi-channel charger · 2 channels')).toBeVisible();

	// The JSON list says the same.
	const api = await page.request.get(`/api/w/${slug}/chargers`);
	expect(api.status()).toBe(200);
	const body = (await api.json()) as { chargers: { name: string; channels: { maxAmps: number }[] }[] };
	expect(body.chargers.map((c) => [c.name, c.channels.map((ch) => ch.maxAmps)])).toEqual([['Twin hobby charger', [6, 4]]]);
});

test('a builder makes a chemistry profile starting from LFP', async ({ page }) => {
	const slug = await signUp(page, { name: 'Ines Marr', email: uniqueEmail('chem'), workshop: 'Marr Cells' });
	await page.goto(`/w/${slug}/chemistries`);
	await expect(page.getByRole('heading', { name: 'No profiles of your own yet' })).toBeVisible();
	await page.getByRole('link', { name: 'Add a chemistry profile' }).click();

	await expect(page.getByText("Take every limit from your cell's datasheet: its limits come first.")).toBeVisible();
	await page.getByLabel('Fill every field from a built-in chemistry').selectOption({ label: 'LFP (lithium iron phosphate)' });
	await expect(page.getByLabel('Maximum charge (V)')).toHaveValue('3.65');
	await expect(page.getByLabel('Family')).toHaveValue('lfp');
	await expect(page.getByLabel('Row 1 rest voltage (V)')).toHaveValue('2.0102');

	await page.getByLabel('Name', { exact: true }).fill('Prismatic LFP 105 Ah');
	await page.getByLabel('Maximum charge (V)').fill('3.6');
	await page.getByLabel('Datasheet or source').fill('Maker datasheet rev. 2, page 4');

	// A voltage that falls between rows is refused next to that row.
	await page.getByLabel('Row 3 rest voltage (V)').fill('2.3');
	await page.getByRole('button', { name: 'Save profile' }).click();
	await expect(page.getByText('Row 3: the voltage must not be lower than in row 2.')).toBeVisible();
	await page.getByLabel('Row 3 rest voltage (V)').fill('2.7405');

	await page.getByRole('button', { name: 'Save profile' }).click();
	await expect(page).toHaveURL(new RegExp(`/w/${slug}/chemistries$`));
	const own = page.getByRole('list', { name: "This workshop's profiles" }).getByRole('listitem');
	await expect(own).toHaveCount(1);
	await expect(own.first()).toContainText('Prismatic LFP 105 Ah');
	await expect(own.first()).toContainText(`3.600${thin}V`);
	await expect(own.first()).toContainText('Source: Maker datasheet rev. 2, page 4');
	const builtIns = page.getByRole('list', { name: 'Built-in chemistries' });
	await expect(builtIns.getByRole('listitem')).toHaveCount(6);
	await expect(builtIns.getByRole('listitem').filter({ hasText: 'LTO' })).toContainText('Curve approximate');
});

import { expect, test } from '@playwright/test';
import { PASSWORD, uniqueEmail } from './helpers';

// The workshop is in Chicago; the planner's browser is in Tokyo (15 hours ahead in winter, 14 in
// summer). Every time on the plan screen must be Chicago's wall clock.
const WORKSHOP_ZONE = 'America/Chicago';
const BROWSER_ZONE = 'Asia/Tokyo';

/** 'YYYY-MM-DD' of the day `days` after today in the zone. */
function dayIn(zone: string, days: number): string {
	return new Intl.DateTimeFormat('en-CA', { timeZone: zone, year: 'numeric', month: '2-digit', day: '2-digit' }).format(
		new Date(Date.now() + days * 86_400_000)
	);
}
const dayOfMonth = (ymd: string) => Number(ymd.slice(8, 10));

test('a builder plans one group at a time with hands-on hours, in the workshop zone, and saves it', async ({ browser }) => {
	// Two browsers and five pages: more than the default 30 s on a cold server.
	test.setTimeout(90_000);
	// Sign up from a browser in the workshop's zone: the new workshop takes that zone.
	const home = await browser.newContext({ timezoneId: WORKSHOP_ZONE });
	const setup = await home.newPage();
	// Each form's script must run before it is filled (a dev server hydrates late).
	await setup.goto('/signup');
	await setup.waitForLoadState('networkidle');
	await setup.getByLabel('Your name').fill('Pia Planner');
	await setup.getByLabel('E-mail').fill(uniqueEmail('planner'));
	await setup.getByLabel('Password').fill(PASSWORD);
	await setup.getByLabel('Workshop name').fill('Pia Bench');
	await expect(setup.getByLabel('Time zone')).toHaveValue(WORKSHOP_ZONE);
	await setup.getByRole('button', { name: 'Create account and workshop' }).click();
	await expect(setup).toHaveURL(/\/w\/[a-z0-9-]+\/packs$/);
	const slug = new URL(setup.url()).pathname.split('/')[2];

	await setup.goto(`/w/${slug}/cell-specs/new`);
	await setup.waitForLoadState('networkidle');
	await setup.getByLabel('Name').fill('Plan 18650');
	await setup.getByLabel('Chemistry').selectOption('builtin:nmc');
	await setup.getByLabel('Capacity (Ah)').fill('3');
	await setup.getByLabel('Max charge current (A)').fill('3');
	await setup.getByLabel('Max continuous discharge (A)').fill('10');
	await setup.getByLabel('Max burst discharge (A)').fill('20');
	await setup.getByRole('button', { name: 'Save cell spec' }).click();
	await expect(setup.getByRole('cell', { name: 'Plan 18650' })).toBeVisible();

	await setup.goto(`/w/${slug}/packs/new`);
	await setup.waitForLoadState('networkidle');
	await setup.getByLabel('Pack name').fill('Plan test 3S');
	await setup.getByLabel('Cell spec').selectOption({ label: 'Plan 18650' });
	await setup.getByLabel('Groups in series (S)').fill('3');
	await setup.getByLabel('Cells per group (P)').fill('1');
	await setup.getByRole('button', { name: 'Create pack' }).click();
	await expect(setup.getByRole('heading', { name: 'Plan test 3S' })).toBeVisible();
	const packId = new URL(setup.url()).pathname.split('/')[4];

	const made = await setup.request.post(`/api/w/${slug}/chargers`, {
		data: { name: 'One-amp supply', kind: 'bench-supply', channels: [{ maxVolts: 30, maxAmps: 1 }] }
	});
	expect(made.status()).toBe(201);
	const storage = await home.storageState();
	await home.close();

	// The planner's own browser, in another zone.
	const away = await browser.newContext({ timezoneId: BROWSER_ZONE, storageState: storage });
	const page = await away.newPage();
	expect(await page.evaluate(() => Intl.DateTimeFormat().resolvedOptions().timeZone)).toBe(BROWSER_ZONE);
	await page.goto(`/w/${slug}/sessions/new?pack=${packId}`);
	await expect(page.getByText(`Starts (${WORKSHOP_ZONE})`)).toBeVisible();
	// The night-watch button works only once the page's script runs.
	await expect(page.getByRole('button', { name: 'Add a night watch' })).toBeEnabled({ timeout: 15_000 });
	await page.getByLabel('Charger').selectOption({ label: 'One-amp supply' });

	for (const g of [1, 2, 3]) await page.getByLabel(`Group ${g} (V per cell)`).fill('3.60');
	const day1 = dayIn(WORKSHOP_ZONE, 1);
	const day2 = dayIn(WORKSHOP_ZONE, 2);
	const day3 = dayIn(WORKSHOP_ZONE, 3);
	await page.getByLabel(/^Starts/).fill(`${day1}T08:00`);
	await page.getByLabel('Minutes to swap leads').fill('10');
	await page.getByLabel('Someone is here from').fill('08:00');
	await page.getByLabel('until').first().fill('09:00');

	// Worked by hand. Each group is 1 × 3 Ah at a rest of 3.60 V — below half full on published NMC
	// rest-voltage tables (50 % is about 3.7 V) — so it needs at least 1.5 Ah, and the supply gives at
	// most 1 A: a step lasts more than 1.5 h, longer than the 08:00–09:00 window, so no second step
	// can start the same morning. A 0.33C CC/CV charge of a Li-ion cell ends within a few hours
	// (BU-409; the CC part is at most 3 Ah / 1 A = 3 h), well before the next morning. So the steps
	// start at 08:00 on day 1, then at 08:00 + the 10-minute swap on days 2 and 3, Chicago time.
	const steps = page.getByRole('list', { name: 'Steps and swap times' }).getByRole('listitem');
	await expect(steps).toHaveCount(3);
	const expected = [
		{ day: day1, clock: '08:00', text: /Connect the leads to group 1, set 4\.20\s?V and 1\s?A/ },
		{ day: day2, clock: '08:10', text: /Move the leads to group 2, set 4\.20\s?V and 1\s?A/ },
		{ day: day3, clock: '08:10', text: /Move the leads to group 3, set 4\.20\s?V and 1\s?A/ }
	];
	for (const [i, e] of expected.entries()) {
		await expect(steps.nth(i).locator('time')).toHaveText(new RegExp(`^\\w{3} ${dayOfMonth(e.day)} \\w{3}, ${e.clock}$`));
		await expect(steps.nth(i)).toContainText(e.text);
	}
	// In Tokyo's zone 08:10 in Chicago would read 22:10 or 23:10: not on the page.
	await expect(page.getByRole('list', { name: 'Steps and swap times' })).not.toContainText(/2[23]:10/);

	// With nobody there from 09:00, group 1 charges on alone, then sits held at 4.20 V per cell until
	// someone is back at 08:00 the next morning.
	const unattended = page.getByRole('list', { name: 'Hours with nobody there' });
	await expect(page.getByText(/^Watch: .* with nobody there$/)).toBeVisible();
	await expect(unattended.getByRole('listitem').filter({ hasText: 'Group 1 charges with nobody there' })).toContainText(
		new RegExp(`\\w{3} ${dayOfMonth(day1)} \\w{3}, 09:00 –`)
	);
	await expect(unattended.getByRole('listitem').filter({ hasText: /Group 1 sits held at 4\.20\s?V per cell/ })).toContainText(
		new RegExp(`– \\w{3} ${dayOfMonth(day2)} \\w{3}, 08:00`)
	);
	await expect(page.getByRole('complementary', { name: 'Safety before charging' })).toBeVisible();

	await page.getByRole('button', { name: 'Save the plan' }).click();
	await expect(page).toHaveURL(new RegExp(`/w/${slug}/sessions/[a-z2-7]{24}$`));
	const sessionUrl = page.url();

	// The planned session opens in the same form, with the same wall times; a 20-minute swap moves
	// the next mornings' steps to 08:20.
	await page.goto(`${sessionUrl}/plan`);
	await expect(page.getByRole('button', { name: 'Add a night watch' })).toBeEnabled({ timeout: 15_000 });
	await expect(page.getByLabel(/^Starts/)).toHaveValue(`${day1}T08:00`);
	await page.getByLabel('Minutes to swap leads').fill('20');
	await expect(steps.nth(1).locator('time')).toHaveText(new RegExp(`^\\w{3} ${dayOfMonth(day2)} \\w{3}, 08:20$`));
	await page.getByRole('button', { name: 'Save the changed plan' }).click();
	await expect(page).toHaveURL(sessionUrl);
	await page.goto(`${sessionUrl}/plan`);
	await expect(page.getByLabel('Minutes to swap leads')).toHaveValue('20');
	await away.close();
});

import { expect, test } from '@playwright/test';
import { newNmc21700, signUp, uniqueEmail } from './helpers';

// A phone in the workshop's zone plans a 4S1P pack one group at a time on a 5 A bench supply and
// reads what a second supply would change.
const ZONE = 'America/Chicago';
test.use({ timezoneId: ZONE, viewport: { width: 390, height: 844 } });

/** 'YYYY-MM-DD' of the day after today in the zone. */
const tomorrow = () =>
	new Intl.DateTimeFormat('en-CA', { timeZone: ZONE, year: 'numeric', month: '2-digit', day: '2-digit' }).format(new Date(Date.now() + 86_400_000));
const minutesOf = (clock: string) => Number(clock.slice(0, 2)) * 60 + Number(clock.slice(3, 5));

test('the plan screen says when a second supply would end the session, and its lower bound', async ({ page }) => {
	test.setTimeout(90_000);
	const slug = await signUp(page, { name: 'Wren Whatif', email: uniqueEmail('whatif'), workshop: 'Wren Bench' });
	await newNmc21700(page, slug, 'What-if 21700');
	await page.goto(`/w/${slug}/packs/new`);
	await page.getByLabel('Pack name').fill('What-if 4S');
	await page.getByLabel('Groups in series (S)').fill('4');
	await page.getByLabel('Cells per group (P)').fill('1');
	await page.getByRole('button', { name: 'Create pack' }).click();
	await expect(page.getByRole('heading', { name: 'What-if 4S' })).toBeVisible();
	const packId = new URL(page.url()).pathname.split('/')[4];
	const made = await page.request.post(`/api/w/${slug}/chargers`, {
		data: { name: 'Five-amp supply', kind: 'bench-supply', channels: [{ maxVolts: 30, maxAmps: 5 }] }
	});
	expect(made.status()).toBe(201);

	await page.goto(`/w/${slug}/sessions/new?pack=${packId}`);
	await expect(page.getByRole('button', { name: 'Add a night watch' })).toBeEnabled({ timeout: 15_000 });
	await page.getByLabel('Charger').selectOption({ label: 'Five-amp supply' });
	for (const g of [1, 2, 3, 4]) await page.getByLabel(`Group ${g} (V per cell)`).fill('3.60');
	await page.getByLabel(/^Starts/).fill(`${tomorrow()}T08:00`);
	await page.getByLabel('Minutes to swap leads').fill('10');

	// Four equal steps of d hours each (same cells, same rest volts), someone there throughout:
	//   one supply:  08:00 + 4d + 3 × 10 min;
	//   two supplies: two groups each, 08:00 + 2d + 10 min;
	//   bound max(d, 4d / 2) = 2d → 08:00 + 2d, ten minutes before the two-supply end.
	// d is read back from the plan's own end (shown to the minute, so the checks allow a minute).
	const summary = page.getByRole('region', { name: 'The plan' });
	const endsAbout = (await summary.getByText('Ends about').locator('xpath=following-sibling::dd').textContent())!.trim();
	const planEnd = minutesOf(endsAbout.slice(-5));
	const d = (planEnd - 8 * 60 - 30) / 4;
	expect(d).toBeGreaterThan(30); // a 4 Ah cell at 4 A from below half full: more than half an hour

	const whatIf = page.getByRole('region', { name: 'With more equipment' });
	await whatIf.scrollIntoViewIfNeeded();
	await expect(whatIf).toBeVisible();
	// The what-if is worked out once the form has settled: wait for the one of this very plan.
	await expect(whatIf.getByRole('listitem').first()).toContainText(`instead of ${endsAbout.slice(-5)}`);
	const sentence = (await whatIf.getByRole('listitem').first().textContent())!.replace(/\u2009/g, ' ').trim();
	const m = sentence.match(
		/^With a second 5 A supply this session would end \w{3} \d{1,2} \w{3}, (\d\d:\d\d) instead of (\d\d:\d\d) \((?:(\d+) h ?)?(?:(\d+) min)? sooner; it cannot end before (\d\d:\d\d) with two supplies\)\.$/
	);
	expect(m, sentence).not.toBeNull();
	const [, twoEnd, insteadOf, savedH, savedMin, bound] = m!;
	expect(insteadOf).toBe(endsAbout.slice(-5));
	expect(Math.abs(minutesOf(twoEnd) - (8 * 60 + 2 * d + 10))).toBeLessThanOrEqual(1);
	expect(Math.abs(minutesOf(bound) - (8 * 60 + 2 * d))).toBeLessThanOrEqual(1);
	expect(Math.abs(minutesOf(twoEnd) - minutesOf(bound) - 10)).toBeLessThanOrEqual(1);
	const saved = Number(savedH ?? 0) * 60 + Number(savedMin ?? 0);
	expect(Math.abs(saved - (2 * d + 20))).toBeLessThanOrEqual(1);

	// The what-if follows the form: with 40-minute swaps the plan ends later, two supplies save more.
	await page.getByLabel('Minutes to swap leads').fill('40');
	await expect(whatIf.getByRole('listitem').first()).not.toContainText(`instead of ${insteadOf}`);
});

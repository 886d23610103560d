import AxeBuilder from '@axe-core/playwright';
import { expect, test, type Page } from '@playwright/test';
import { PASSWORD, linkFromMailbox, plannedSession, signOut, signUp, uniqueEmail } from './helpers';

// The screens of an alert on a phone: an over-voltage reading on the run screen turns group 1's
// tile to "act now", sounds the alarm (muted for 5 minutes with a countdown), puts the red strip
// on every page and a count on the Alerts tab; the inbox and the alert page say what to do; a
// technician acknowledges it with a note, and the strip, the count and the alarm go.
test.use({ viewport: { width: 390, height: 844 } });

test('a critical alert: tile, alarm, red strip, inbox, alert page and acknowledgement', async ({ page }) => {
	const slug = await signUp(page, { name: 'Ada Alert', email: uniqueEmail('alerts'), workshop: 'Ada Bench' });
	const sessionId = await plannedSession(page, slug);

	await page.goto(`/w/${slug}/sessions/${sessionId}`);
	await page.getByRole('button', { name: 'Start session' }).click();
	await expect(page.getByText('Running', { exact: true })).toBeVisible();
	await page.getByRole('button', { name: 'Start step' }).click();
	await expect(page.getByText('Group 1 on the charger: 4.20\u2009V, 2\u2009A')).toBeVisible();
	// Nothing needs attention yet: no strip, no alarm, no count.
	await expect(page.getByRole('complementary', { name: 'Critical alert' })).toHaveCount(0);
	await expect(page.getByRole('region', { name: 'Alarm' })).toHaveCount(0);

	// 4.31 V per cell on group 1 of an NMC pack: over its 4.25 V critical limit (4.20 V + 50 mV, BU-409).
	// Posted over the API, as a logger would: the open run screen hears it through its live events.
	const posted = await page.request.post(`/api/w/${slug}/sessions/${sessionId}/readings`, {
		data: { readings: [{ clientId: 'e2e-over-1', groupIndex: 1, takenAt: new Date().toISOString(), volts: 4.31 }] }
	});
	expect(posted.status(), await posted.text()).toBe(201);

	const g1 = page.getByRole('listitem', { name: 'Group 1' });
	await expect(g1).toContainText('act now');
	await expect(g1.getByRole('link', { name: 'Group 1: over voltage' })).toBeVisible();
	await expect(page.getByRole('listitem', { name: 'Group 2' })).not.toContainText('act now');

	// The alarm: a button lets the sound play where the browser waits for a tap; muting shows the countdown.
	const alarm = page.getByRole('region', { name: 'Alarm' });
	await expect(alarm).toContainText('Act now: a critical alert needs acknowledging.');
	await expect(alarm).toContainText('Disconnect the charger from group 1 now.');
	const allow = alarm.getByRole('button', { name: 'Tap to allow the alarm sound' });
	if (await allow.isVisible()) await allow.click();
	await expect(alarm).toHaveAttribute('data-alarm', 'sounding');
	await alarm.getByRole('button', { name: 'Mute for 5 minutes' }).click();
	await expect(alarm).toHaveAttribute('data-alarm', 'muted');
	await expect(alarm.getByRole('status')).toContainText(/Muted — sounds again in [45]:\d\d/);
	await expect(alarm.getByRole('button', { name: 'Mute for 5 minutes' })).toHaveCount(0);
	// A reload keeps the mute (no fresh 5 minutes, no early beeps either).
	await page.reload();
	await expect(page.getByRole('region', { name: 'Alarm' })).toHaveAttribute('data-alarm', /muted|blocked/);

	// The red strip on every page of the workshop, and the count on the Alerts tab.
	const strip = page.getByRole('complementary', { name: 'Critical alert' });
	await page.goto(`/w/${slug}/packs`);
	await expect(strip).toContainText('Act now: Group 1: over voltage.');
	await expect(strip).toContainText('Disconnect the charger from group 1 now.');
	const alertsTab = page.getByRole('navigation', { name: 'Main (phone)' }).getByRole('link', { name: /Alerts/ });
	await expect(alertsTab).toContainText('1');

	// The inbox: the alert first, with its state word, group, pack and session.
	await alertsTab.click();
	await expect(page.getByRole('heading', { name: 'Alerts', level: 1 })).toBeVisible();
	const open = page.getByRole('region', { name: /Needing attention/ });
	await expect(open.getByRole('listitem')).toHaveCount(1);
	await expect(open.getByRole('listitem').first()).toContainText('act now');
	await expect(open.getByRole('listitem').first()).toContainText('Group 1 · Run trial');
	await expect(page.getByText('Alerts are being built')).toHaveCount(0);

	// The alert page: what to do now first, the numbers, then the acknowledgement.
	await strip.getByRole('link', { name: 'Open the alert' }).click();
	await expect(page.getByRole('heading', { name: 'Group 1: over voltage', level: 1 })).toBeVisible();
	const alertId = new URL(page.url()).pathname.split('/').pop();
	const todo = page.getByRole('region', { name: 'What to do now' });
	await expect(todo).toContainText('Disconnect the charger from group 1 now.');
	await expect(todo).toContainText('call the fire service');
	await expect(page.getByRole('note', { name: 'Fire safety' })).toBeVisible();
	const found = page.getByRole('region', { name: 'What was found' });
	await expect(found).toContainText('4.310\u2009V');
	await expect(found).toContainText('4.250\u2009V');

	// A technician acknowledges it (the owner could too): join through an invitation.
	const techEmail = uniqueEmail('alerttech');
	await page.goto(`/w/${slug}/workshop/members`);
	await page.getByLabel('Their e-mail').fill(techEmail);
	await page.getByLabel('Role', { exact: true }).selectOption('technician');
	await page.getByRole('button', { name: 'Send invitation' }).click();
	await expect(page.getByRole('status')).toContainText(`Invitation sent to ${techEmail}`);
	await signOut(page);
	await page.goto(await linkFromMailbox(page, techEmail, '/invite/'));
	await page.getByRole('link', { name: /create my account/ }).click();
	await page.getByLabel('Your name').fill('Tove Tech');
	await page.getByLabel('Password').fill(PASSWORD);
	await page.getByRole('button', { name: 'Join the workshop' }).click();
	await expect(page).toHaveURL(new RegExp(`/w/${slug}/packs$`));

	await strip.getByRole('link', { name: 'Open the alert' }).click();
	await page.getByLabel('Note (optional)').fill('Charger off, group 1 cooling on the tray.');
	await page.getByRole('button', { name: 'Acknowledge' }).click();
	const ack = page.getByRole('region', { name: 'Acknowledgement' });
	await expect(ack).toContainText('Acknowledged by Tove Tech');
	await expect(ack).toContainText('Charger off, group 1 cooling on the tray.');
	await expect(strip).toHaveCount(0);
	await expect(page.getByRole('navigation', { name: 'Main (phone)' }).getByRole('link', { name: /Alerts/ })).not.toContainText(
		/\d/
	);

	// The run screen: no alarm any more; the condition still holds, so the tile still says act now.
	await page.goto(`/w/${slug}/sessions/${sessionId}`);
	await expect(page.getByRole('region', { name: 'Alarm' })).toHaveCount(0);
	await expect(page.getByRole('listitem', { name: 'Group 1' })).toContainText('act now');
	await expect(page.getByRole('region', { name: 'Alerts of this session' })).toContainText('acknowledged');

	// A second acknowledgement (another tab that had the form open) is refused, naming who did it.
	const again = await page.request.post(`/api/w/${slug}/alerts/${alertId}/ack`, { data: {} });
	expect(again.status()).toBe(409);
	expect((await again.json()).message).toMatch(/already acknowledged by you/);
});

/** axe's WCAG 2 A/AA rules on the page as it stands, light; contrast only in dark (as accessibility.test.ts). */
async function axeViolations(page: Page): Promise<string[]> {
	const found: string[] = [];
	for (const colorScheme of ['light', 'dark'] as const) {
		await page.emulateMedia({ colorScheme });
		const axe = new AxeBuilder({ page });
		if (colorScheme === 'dark') axe.withRules(['color-contrast', 'link-in-text-block']);
		else axe.withTags(['wcag2a', 'wcag2aa', 'best-practice']);
		for (const v of (await axe.analyze()).violations) found.push(`${colorScheme}: ${v.id} at ${v.nodes.map((n) => n.target.join(' ')).slice(0, 3).join(', ')}`);
	}
	return found;
}

test('the red strip, the alarm, the inbox and the alert page pass axe in light and dark', async ({ page }) => {
	test.setTimeout(180_000);
	const slug = await signUp(page, { name: 'Axe Alert', email: uniqueEmail('alerts-axe'), workshop: 'Axe Alert Bench' });
	const sessionId = await plannedSession(page, slug);
	await page.goto(`/w/${slug}/sessions/${sessionId}`);
	await page.getByRole('button', { name: 'Start session' }).click();
	await page.getByRole('button', { name: 'Start step' }).click();
	await expect(page.getByText('Group 1 on the charger: 4.20\u2009V, 2\u2009A')).toBeVisible();
	const posted = await page.request.post(`/api/w/${slug}/sessions/${sessionId}/readings`, {
		data: {
			readings: [
				{ clientId: 'axe-1', groupIndex: 1, takenAt: new Date().toISOString(), volts: 4.31 },
				{ clientId: 'axe-2', groupIndex: 2, takenAt: new Date().toISOString(), volts: 3.6, tempC: 47 }
			]
		}
	});
	expect(posted.status(), await posted.text()).toBe(201);
	await expect(page.getByRole('region', { name: 'Alarm' })).toBeVisible();
	await expect(page.getByRole('complementary', { name: 'Critical alert' })).toBeVisible();
	expect(await axeViolations(page), 'run screen').toEqual([]);

	await page.goto(`/w/${slug}/alerts`);
	await expect(page.getByRole('region', { name: /Needing attention/ }).getByRole('listitem')).toHaveCount(2);
	expect(await axeViolations(page), 'inbox').toEqual([]);

	await page.getByRole('complementary', { name: 'Critical alert' }).getByRole('link', { name: 'Open the alert' }).click();
	await expect(page.getByRole('region', { name: 'What to do now' })).toBeVisible();
	expect(await axeViolations(page), 'alert page').toEqual([]);
});

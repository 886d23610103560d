import { expect, test } from '@playwright/test';
import { PASSWORD, linkFromMailbox, signOut, signUp, uniqueEmail } from './helpers';

test('the owner invites a technician, who joins through the e-mailed link and cannot manage members', async ({
	page
}) => {
	const ownerEmail = uniqueEmail('owner');
	const techEmail = uniqueEmail('tech');
	const slug = await signUp(page, { name: 'Olive Owner', email: ownerEmail, workshop: 'Olive Bench' });

	await page.getByRole('link', { name: 'Workshop' }).first().click();
	await page.getByRole('link', { name: 'Manage members' }).click();
	await page.getByLabel('Their e-mail').fill(techEmail);
	await page.getByLabel('Role', { exact: true }).selectOption('technician');
	await page.getByRole('button', { name: 'Send invitation' }).click();
	await expect(page.getByRole('status')).toContainText(`Invitation sent to ${techEmail}`);
	await signOut(page);

	const link = await linkFromMailbox(page, techEmail, '/invite/');
	await page.goto(link);
	await expect(page.getByRole('heading', { name: 'Join Olive Bench' })).toBeVisible();
	await page.getByRole('link', { name: /create my account/ }).click();
	await page.getByLabel('Your name').fill('Theo Technician');
	await expect(page.getByLabel('E-mail')).toHaveValue(techEmail);
	await page.getByLabel('Password').fill(PASSWORD);
	await page.getByRole('button', { name: 'Join the workshop' }).click();
	await expect(page).toHaveURL(new RegExp(`/w/${slug}/packs$`));

	// Technicians see the people but cannot manage them.
	await page.goto(`/w/${slug}/workshop`);
	await expect(page.getByText('Olive Owner')).toBeVisible();
	await expect(page.getByRole('link', { name: 'Manage members' })).toHaveCount(0);
	const response = await page.goto(`/w/${slug}/workshop/members`);
	expect(response?.status()).toBe(403);
	await expect(page.getByRole('heading', { name: 'Not allowed' })).toBeVisible();

	// The form action refuses too, not only the page.
	const post = await page.request.post(`/w/${slug}/workshop/members?/invite`, {
		form: { email: uniqueEmail('sneaky'), role: 'owner' },
		headers: { origin: new URL(page.url()).origin, accept: 'application/json' }
	});
	expect(post.status()).toBe(403);
});

import { fail as kitFail, redirect } from '@sveltejs/kit';
import { z } from 'zod';
import { listOAuthAccounts, unlinkOAuthAccount } from '$lib/server/accounts';
import { requireUser } from '$lib/server/auth/permissions';
import { configuredProviders } from '$lib/server/auth/oauth';
import { fail, superValidate, zod4 } from '$lib/server/forms';
import { createWorkshop, listWorkshopsOf } from '$lib/server/workshops';
import { workshopSchema } from '$lib/schemas/auth';
import type { Actions, PageServerLoad } from './$types';
import { guardActions } from '$lib/server/input-problems';
import { readForm } from '$lib/server/form-input';

const linkErrors: Record<string, string> = {
	'linked-elsewhere': 'That provider account is already linked to another Cellsitter account.',
	'provider-already-linked': 'You already linked another account of that provider. Unlink it first.',
	'oauth-failed': 'The provider did not let us link it. Try again in a moment.',
	'no-email': 'The provider did not share a verified e-mail address, so it was not linked.'
};

export const load: PageServerLoad = async ({ locals, url }) => {
	const user = requireUser(locals, url);
	const [workshops, linked, form] = await Promise.all([
		listWorkshopsOf(user.id),
		listOAuthAccounts(user.id),
		superValidate({ timeZone: 'UTC' }, zod4(workshopSchema), { errors: false })
	]);
	const linkedIds = new Set(linked.map((l) => l.provider));
	const providers = configuredProviders();
	return {
		user,
		workshops,
		linked: linked.map((l) => ({ ...l, name: providers.find((p) => p.id === l.provider)?.name ?? l.provider })),
		linkable: providers.filter((p) => !linkedIds.has(p.id)),
		form,
		notice: url.searchParams.get('linked') ? 'Provider linked. You can now sign in with it.' : null,
		problem: linkErrors[url.searchParams.get('link-error') ?? ''] ?? null
	};
};

/** A provider id as configured (github, oauth…): short, lower case. */
const unlinkSchema = z.object({ provider: z.string('Choose a provider to unlink.').regex(/^[a-z0-9-]{1,40}$/, 'Choose a provider to unlink.') });

export const actions: Actions = guardActions<Actions>({
	createWorkshop: async ({ locals, url, request }) => {
		const user = requireUser(locals, url);
		const form = await superValidate(request, zod4(workshopSchema));
		if (!form.valid) return fail(400, { form });
		const workshop = await createWorkshop(user.id, form.data);
		redirect(303, `/w/${workshop.slug}/packs`);
	},
	unlink: async ({ locals, url, request }) => {
		const user = requireUser(locals, url);
		const parsed = await readForm(request, unlinkSchema);
		if (!parsed.ok) return kitFail(400, { unlinkError: parsed.message });
		const result = await unlinkOAuthAccount(user.id, parsed.data.provider);
		if (!result.ok) return { unlinkError: 'Set a password first: it is your only way to sign in.' };
		return {};
	}
});

import { fail } from '@sveltejs/kit';
import { requireMemberWith } from '$lib/server/auth/permissions';
import { listBatch } from '$lib/server/cells';
import { acceptMatching, matchingCapacity, proposeMatching, savedAssignment } from '$lib/server/matching';
import { requirePack } from '$lib/server/packs';
import { matchingAcceptSchema } from '$lib/schemas/packs';
import type { Actions, PageServerLoad } from './$types';

export const load: PageServerLoad = async ({ locals, params, url }) => {
	const member = await requireMemberWith(locals, params, url, 'packs.edit');
	const [pack, batch] = await Promise.all([requirePack(member, params.packId), listBatch(member, params.packId)]);
	return {
		pack: { id: pack.id, name: pack.name, series: pack.series, parallel: pack.parallel },
		cells: batch.cells.map((c) => ({
			id: c.id,
			label: c.label,
			capacityAh: matchingCapacity(c, batch.spec.capacityAh),
			measured: c.capacityAh !== null,
			resistanceMilliOhms: c.resistanceMilliOhms,
			verdict: c.verdict,
			placement: c.placement
		})),
		saved: savedAssignment(batch.cells, pack.series)
	};
};

export const actions: Actions = {
	propose: async ({ locals, params, url, request }) => {
		const member = await requireMemberWith(locals, params, url, 'packs.edit');
		const includeSuspect = (await request.formData()).get('includeSuspect') === 'on';
		const proposal = await proposeMatching(member, params.packId, { includeSuspect });
		if (!proposal.ok) return fail(409, { problem: proposal.message });
		return { proposal: { groups: proposal.groups.map((g) => g.cellIds), optimal: proposal.optimal, includeSuspect } };
	},
	accept: async ({ locals, params, url, request }) => {
		const member = await requireMemberWith(locals, params, url, 'packs.edit');
		const form = await request.formData();
		const parsed = matchingAcceptSchema.safeParse({
			groups: JSON.parse(String(form.get('groups') ?? 'null')),
			replace: form.get('replace') === 'true'
		});
		if (!parsed.success) return fail(400, { problem: 'The assignment could not be read. Propose again.' });
		const result = await acceptMatching(member, params.packId, parsed.data);
		if (!result.ok) return fail(result.reason === 'would-replace' ? 409 : 400, { problem: result.message, reason: result.reason });
		return { accepted: `Saved: ${result.placed} cells in groups, ${result.spares} spare.` };
	}
};

import { requireMemberWith } from '$lib/server/auth/permissions';
import { listBatch } from '$lib/server/cells';
import { matchingCapacity, savedAssignment } from '$lib/server/matching';
import { requirePack } from '$lib/server/packs';
import type { PageServerLoad } from './$types';

// Proposing and accepting go through the JSON API (docs/api.md) from the page.
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

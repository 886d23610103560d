import { requireMemberWith } from '$lib/server/auth/permissions';
import { listBatch } from '$lib/server/cells';
import { batchVersion, matchingCapacity, savedAssignment } from '$lib/server/matching';
import type { PageServerLoad } from './$types';

// Proposing and accepting go through the JSON API (docs/api.md) from the page.
export const load: PageServerLoad = async ({ locals, params, url }) => {
	const member = await requireMemberWith(locals, params, url, 'packs.edit');
	const batch = await listBatch(member, params.packId);
	const { pack } = batch;
	return {
		pack: { id: pack.id, name: pack.name, series: pack.series, parallel: pack.parallel },
		cells: batch.cells.map((c) => ({
			id: c.id,
			label: c.label,
			capacityAh: matchingCapacity(c, batch.spec.capacityAh),
			measured: c.capacityAh !== null,
			resistanceMilliOhms: c.resistanceMilliOhms,
			verdict: c.verdict,
			placement: c.placement,
			reasons: c.reasons
		})),
		nominalAh: batch.spec.capacityAh,
		saved: savedAssignment(batch.cells, pack.series, pack.parallel),
		/** What the saved assignment was read from: accepting it (with swaps) sends it back. */
		version: batchVersion(pack, batch.cells)
	};
};

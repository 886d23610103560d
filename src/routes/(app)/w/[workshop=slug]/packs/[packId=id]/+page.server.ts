import { can } from '$lib/permissions';
import { requireMemberWith } from '$lib/server/auth/permissions';
import { listAttachments } from '$lib/server/attachments';
import { listBatch } from '$lib/server/cells';
import { matchingCapacity } from '$lib/server/matching';
import { packView } from '$lib/server/packs';
import type { PageServerLoad } from './$types';

export const load: PageServerLoad = async ({ locals, params, url }) => {
	const member = await requireMemberWith(locals, params, url, 'packs.viewOwn');
	const [batch, attachments] = await Promise.all([
		listBatch(member, params.packId),
		listAttachments(member, params.packId)
	]);
	const view = await packView(batch.pack, batch.spec);
	const { series } = view.pack;
	const groups = Array.from({ length: series }, (_, i) => {
		const members = batch.cells.filter((c) => c.groupIndex === i + 1);
		const resistances = members.flatMap((c) => (c.resistanceMilliOhms === null ? [] : [c.resistanceMilliOhms]));
		return {
			index: i + 1,
			cells: members.map((c) => ({ id: c.id, label: c.label, verdict: c.verdict })),
			capacityAh: members.reduce((sum, c) => sum + matchingCapacity(c, view.spec.capacityAh), 0),
			resistanceSpread: resistances.length > 1 ? Math.max(...resistances) - Math.min(...resistances) : null
		};
	});
	const counts = {
		total: batch.cells.length,
		ok: batch.cells.filter((c) => c.verdict === 'ok').length,
		suspect: batch.cells.filter((c) => c.verdict === 'suspect').length,
		reject: batch.cells.filter((c) => c.verdict === 'reject').length,
		spare: batch.cells.filter((c) => c.placement === 'spare').length
	};
	return {
		...view,
		spec: { name: view.spec.name, chemistryName: view.spec.chemistry.name, capacityAh: view.spec.capacityAh },
		groups,
		counts,
		attachments,
		canAttach: can(member.role, 'attachments.add'),
		canEdit: can(member.role, 'packs.edit'),
		canMeasure: can(member.role, 'measurements.edit')
	};
};

import { groupStatistics } from '$lib/group-stats';
import { can } from '$lib/permissions';
import { requireMemberWith } from '$lib/server/auth/permissions';
import { listAttachments } from '$lib/server/attachments';
import { listBatch } from '$lib/server/cells';
import { packView } from '$lib/server/packs';
import { listSessionsForPeople } from '$lib/server/sessions/list';
import type { PageServerLoad } from './$types';

export const load: PageServerLoad = async ({ locals, params, url }) => {
	const member = await requireMemberWith(locals, params, url, 'packs.viewOwn');
	const [batch, attachments, sessions] = await Promise.all([
		listBatch(member, params.packId),
		listAttachments(member, params.packId),
		listSessionsForPeople(member, { packId: params.packId })
	]);
	const view = await packView(batch.pack, batch.spec);
	const stats = groupStatistics(view.pack.series, batch.cells, view.spec.capacityAh);
	const counts = {
		total: batch.cells.length,
		ok: batch.cells.filter((c) => c.verdict === 'ok').length,
		suspect: batch.cells.filter((c) => c.verdict === 'suspect').length,
		reject: batch.cells.filter((c) => c.verdict === 'reject').length,
		spare: batch.cells.filter((c) => c.placement === 'spare').length
	};
	return {
		...view,
		spec: {
			name: view.spec.name,
			chemistryName: view.spec.chemistry.name,
			capacityAh: view.spec.capacityAh,
			maxBurstSeconds: view.spec.maxBurstSeconds
		},
		groups: stats.groups,
		groupStats: { placed: stats.placed, spreadAh: stats.spreadAh, warnings: stats.warnings },
		counts,
		attachments,
		sessions,
		canPlan: can(member.role, 'plans.edit'),
		canAttach: can(member.role, 'attachments.add'),
		canEdit: can(member.role, 'packs.edit'),
		canMeasure: can(member.role, 'measurements.edit')
	};
};

import { error, fail } from '@sveltejs/kit';
import { z } from 'zod';
import { loggerMappingSchema } from '$lib/logger-csv';
import { requireMemberWith, type Member } from '$lib/server/auth/permissions';
import { readForm } from '$lib/server/form-input';
import { guardActions } from '$lib/server/input-problems';
import { getLoggerMapping, importLoggerCsv, saveLoggerMapping } from '$lib/server/sessions/logger';
import { sessionForMember } from '$lib/server/sessions/readings';
import type { Actions, PageServerLoad } from './$types';

async function sessionHead(member: Member, sessionId: string) {
	const head = await sessionForMember(member, sessionId);
	if (!head) error(404, 'Not found');
	return head;
}

export const load: PageServerLoad = async ({ locals, params, url }) => {
	const member = await requireMemberWith(locals, params, url, 'readings.log');
	const [session, mapping] = await Promise.all([sessionHead(member, params.sessionId), getLoggerMapping(member)]);
	return {
		session: { id: session.id, name: session.name, status: session.status, packName: session.packName, series: session.series },
		mapping,
		timeZone: member.workshop.timeZone
	};
};

export const actions: Actions = guardActions<Actions>({
	saveMapping: async ({ locals, params, url, request }) => {
		const member = await requireMemberWith(locals, params, url, 'readings.log');
		const input = await readForm(request, loggerMappingSchema);
		if (!input.ok) return fail(400, { mappingProblem: input.message });
		await saveLoggerMapping(member, input.data);
		return { mappingDone: 'Column map saved for every upload in this workshop.' };
	},
	importCsv: async ({ locals, params, url, request }) => {
		const member = await requireMemberWith(locals, params, url, 'readings.log');
		const input = await readForm(request, z.object({ csv: z.string('Choose the logger’s CSV file.') }));
		if (!input.ok) return fail(400, { message: input.message, errors: [] });
		const result = await importLoggerCsv(member, params.sessionId, input.data.csv);
		if (!result.ok) return fail(result.status, { message: result.message, errors: result.errors });
		return { stored: result.stored, duplicates: result.duplicates };
	}
});

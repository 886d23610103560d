import { json } from '@sveltejs/kit';
import { readingPatchSchema } from '$lib/schemas/readings';
import { endpoint, problem, readJson, requireApiMember } from '$lib/server/api';
import { editReading } from '$lib/server/sessions/readings';
import type { RequestHandler } from './$types';

/** Corrects a stored reading: only the keys sent change; the original values stay in the audit trail. */
export const PATCH: RequestHandler = endpoint(async (event) => {
	const member = await requireApiMember(event, 'readings.log');
	const patch = await readJson(event.request, readingPatchSchema);
	if (patch instanceof Response) return patch;
	const result = await editReading(member, event.params.sessionId, Number(event.params.readingId), patch);
	if (!result.ok) return problem(result.status, { message: result.message });
	return json({ reading: result.reading });
});

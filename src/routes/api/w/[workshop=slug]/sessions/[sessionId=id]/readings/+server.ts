import { json } from '@sveltejs/kit';
import { z } from 'zod';
import { readingBatchSchema, readingListQuerySchema } from '$lib/schemas/readings';
import { endpoint, problem, readJson, requireApiMember } from '$lib/server/api';
import { listReadings, logReadings, type ReadingActor, type ReadingSource } from '$lib/server/sessions/readings';
import { deviceFromBearer, hasBearer } from '$lib/server/sessions/tokens';
import type { RequestHandler } from './$types';

/** Row problems as `{ index, clientId?, path, message }`: which reading of the batch, and what. */
function batchProblems(body: unknown, issues: z.core.$ZodIssue[]) {
	const raw = (body as { readings?: unknown })?.readings;
	return issues.map((issue) => {
		const index = issue.path[0] === 'readings' && typeof issue.path[1] === 'number' ? issue.path[1] : undefined;
		const sent = index !== undefined && Array.isArray(raw) ? (raw[index] as { clientId?: unknown } | null) : null;
		const clientId = sent && typeof sent.clientId === 'string' ? sent.clientId.slice(0, 100) : undefined;
		const where = index === undefined ? '' : `reading ${index + 1}${clientId ? ` (${clientId})` : ''}: `;
		return { index, clientId, path: issue.path.join('.'), message: `${where}${issue.message}` };
	});
}

/**
 * A batch of readings, all stored or none; a clientId sent before is answered as a duplicate.
 * Either a signed-in member who may log readings, or `Authorization: Bearer <device token>` —
 * with a Bearer header the cookies are not looked at.
 */
export const POST: RequestHandler = endpoint(async (event) => {
	const { request, params } = event;
	let actor: ReadingActor;
	let source: ReadingSource;
	if (hasBearer(request)) {
		const device = await deviceFromBearer(request, params.workshop, params.sessionId);
		if (device instanceof Response) return device;
		actor = device;
		source = 'device';
	} else {
		actor = { kind: 'member', member: await requireApiMember(event, 'readings.log') };
		source = 'hand';
	}
	const body = await readJson(request, z.unknown());
	if (body instanceof Response) return body;
	const parsed = readingBatchSchema.safeParse(body);
	if (!parsed.success) {
		const errors = batchProblems(body, parsed.error.issues);
		const rows = new Set(errors.filter((e) => e.index !== undefined).map((e) => e.index)).size;
		return problem(400, {
			message: rows
				? `Nothing was stored: ${rows} reading${rows === 1 ? ' is' : 's are'} not valid.`
				: (errors[0]?.message ?? 'The body is not valid.'),
			errors
		});
	}
	const result = await logReadings(actor, params.sessionId, parsed.data.readings, source);
	if (!result.ok) {
		return problem(result.status, {
			message: result.message,
			errors: result.errors.map((e) => ({ ...e, path: `readings.${e.index}` }))
		});
	}
	const { stored, duplicates, readings } = result;
	return json({ stored, duplicates, readings }, { status: stored > 0 ? 201 : 200 });
});

/** The session's readings (oldest first): `?since=<ISO time>&limit=<n>` (the newest n; default 2000). */
export const GET: RequestHandler = endpoint(async (event) => {
	const member = await requireApiMember(event, 'sessions.view');
	const query = readingListQuerySchema.safeParse(Object.fromEntries(event.url.searchParams));
	if (!query.success) return problem(400, { message: query.error.issues.map((i) => i.message).join(' ') });
	const list = await listReadings(member, event.params.sessionId, query.data);
	if (!list) return problem(404, { message: 'Not found' });
	return json({ readings: list });
});

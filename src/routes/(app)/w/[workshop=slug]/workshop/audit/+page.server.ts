import { error } from '@sveltejs/kit';
import { auditKinds, auditKindWords, describeAuditEvent } from '$lib/audit-words';
import { auditQuerySchema } from '$lib/schemas/audit-log';
import { auditChoices, listAuditEvents, requireAuditReader } from '$lib/server/audit-log';
import { requireMember } from '$lib/server/auth/permissions';
import type { PageServerLoad } from './$types';

/** The audit trail for owners: filters from the query string (a GET form), newest first, a page at a time. */
export const load = (async ({ locals, params, url }) => {
	const member = await requireMember(locals, params, url);
	requireAuditReader(member);
	const parsed = auditQuerySchema.safeParse(Object.fromEntries(url.searchParams));
	if (!parsed.success) error(400, parsed.error.issues[0]?.message ?? 'The filters are not valid.');
	const query = parsed.data;
	const [page, choices] = await Promise.all([listAuditEvents(member, query), auditChoices(member, query.pack)]);
	const zone = member.workshop.timeZone;
	return {
		filters: { person: query.person ?? '', pack: query.pack ?? '', session: query.session ?? '', kind: query.kind ?? '' },
		paged: query.before !== undefined,
		next: page.next,
		events: page.events.map((e) => ({
			id: e.id,
			at: e.at,
			who: e.actorLabel || 'someone',
			packId: e.packId,
			packName: e.packName,
			sessionId: e.sessionId,
			sessionName: e.sessionName,
			...describeAuditEvent(e, zone)
		})),
		choices,
		kinds: auditKinds.map((k) => ({ value: k, label: auditKindWords[k] }))
	};
}) satisfies PageServerLoad;

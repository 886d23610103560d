/**
 * The sessions list as people see it: listSessions, with the running and paused sessions' expected
 * end taken from the run screen's own estimate (run-view.ts: the running steps re-estimated from
 * their readings, the waiting steps moved by what they gained or lost), so that the sessions list,
 * the pack page and the run screen give one time. listSessions' own figure (the plan moved by the
 * latest step's delay) stays for a session whose run view has no end.
 */
import { isHttpError } from '@sveltejs/kit';
import type { Member } from '../auth/permissions';
import { getSession, listSessions, type SessionListItem } from './core';
import { buildRunView, loadRunReadings } from './run-view';

export async function listSessionsForPeople(member: Member, opts: { packId?: string; limit?: number } = {}): Promise<SessionListItem[]> {
	const items = await listSessions(member, opts);
	const now = new Date();
	// A workshop has a handful of live sessions at most; each costs the run screen's own queries.
	return Promise.all(
		items.map(async (item) => {
			if (item.status !== 'running' && item.status !== 'paused') return item;
			const end = await runScreenEnd(member, item.id, now);
			return end ? { ...item, expectedEnd: end } : item;
		})
	);
}

async function runScreenEnd(member: Member, sessionId: string, now: Date): Promise<Date | null> {
	let detail: Awaited<ReturnType<typeof getSession>>;
	try {
		detail = await getSession(member, sessionId);
	} catch (e) {
		if (isHttpError(e, 404)) return null; // removed since the list was read: the list's own figure stands
		throw e;
	}
	const runningIds = detail.steps.filter((s) => s.status === 'running').map((s) => s.id);
	const readings = await loadRunReadings(sessionId, runningIds);
	const view = buildRunView({ session: detail.session, pack: detail.pack, groups: detail.groups, steps: detail.steps, readings, now });
	return view.expectedEnd ? new Date(view.expectedEnd) : null;
}

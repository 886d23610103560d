/**
 * Readings of a session: logged by hand, from a logger's CSV, or posted by a device with a token.
 * A batch is stored whole or not at all, and a reading sent again with the same clientId is stored
 * once (the database's unique key decides, so two concurrent posts of one batch store it once).
 */
import { and, desc, eq, gte, sql } from 'drizzle-orm';
import { READING_LIMITS, type ReadingInput, type ReadingPatch } from '$lib/schemas/readings';
import { canSeePack } from '../packs';
import { requirePermission, type Member } from '../auth/permissions';
import { db, executePrepared, type Tx } from '../db';
import { chargeSessions, deviceTokens, packGroups, packs, readings, users, type ChargeSession } from '../db/schema';
import { writeAudit } from './audit';
import { notifySession, SESSION_EVENTS_CHANNEL } from './notify';
import { afterCommit } from '../alerts/deliver';
import { evaluateReadingsInTx, type AlertChanges } from '../alerts/raise';
import { judgeSession } from '../alerts/judge';

export type ReadingSource = 'hand' | 'file' | 'device';

/** A data logger holding a session's token (src/lib/server/sessions/tokens.ts, deviceFromBearer). */
export type DeviceActor = {
	kind: 'device';
	tokenId: string;
	sessionId: string;
	workshopId: string;
	name: string;
	/** Read with the token (one query): the session's pack and its groups in series. */
	packId: string;
	series: number;
	/** When the token was last marked used (marked at most once a minute). */
	lastUsedAt: Date | null;
};

export type ReadingActor = { kind: 'member'; member: Member } | DeviceActor;

export type RowProblem = { index: number; clientId?: string; message: string };

export type LogReadingsResult =
	| {
			ok: true;
			stored: number;
			duplicates: number;
			readings: { clientId: string; id: number; duplicate: boolean }[];
	  }
	| { ok: false; status: 400 | 404 | 409; message: string; errors: RowProblem[] };

/** Statuses in which readings are taken: by hand or file also after the end (late entries), a device only while it runs. */
const acceptsReadings: Record<ReadingSource, ReadonlySet<ChargeSession['status']>> = {
	hand: new Set(['planned', 'running', 'paused', 'done']),
	file: new Set(['planned', 'running', 'paused', 'done']),
	device: new Set(['planned', 'running', 'paused'])
};

function refusedStatus(status: ChargeSession['status'], source: ReadingSource): string {
	if (status === 'draft') return 'This session is still a draft: save its plan first, then log readings.';
	if (status === 'stopped') return 'This session was stopped, so it takes no more readings. Plan a new session to go on.';
	return 'This session has ended, so a device can no longer post to it. Enter late readings by hand or from a file.';
}

const ROW_PROBLEMS_LISTED = 100;

/** A number as PostgreSQL reads it back exactly (JavaScript's shortest round-trip form), or null. */
const numberText = (n: number | null | undefined) => (n === null || n === undefined ? null : String(n));

/**
 * The rows a pack cannot take: a group beyond its groups in series, a whole-pack reading above
 * series × 5 V per cell. Indexes are the batch's (0-based); at most 100 are listed.
 */
export function packProblems(inputs: ReadingInput[], series: number): RowProblem[] {
	const problems: RowProblem[] = [];
	const packMax = Math.min(series * READING_LIMITS.cellVoltsMax, READING_LIMITS.packVoltsMax);
	inputs.forEach((r, index) => {
		if (problems.length >= ROW_PROBLEMS_LISTED) return;
		if (r.groupIndex !== null && r.groupIndex > series)
			problems.push({ index, clientId: r.clientId, message: `Group ${r.groupIndex} does not exist: this pack has groups 1 to ${series}.` });
		else if (r.groupIndex === null && r.volts != null && r.volts > packMax)
			problems.push({
				index,
				clientId: r.clientId,
				message: `${r.volts} V is more than a ${series}S pack can read (at most ${packMax} V, ${READING_LIMITS.cellVoltsMax} V per cell). A group's reading needs its groupIndex.`
			});
	});
	return problems;
}

export type ReadingSessionHead = {
	id: string;
	name: string;
	workshopId: string;
	packId: string;
	packName: string;
	status: ChargeSession['status'];
	series: number;
};

/** The session of the member's workshop with its pack's name and series, when the member may see it. */
export async function sessionForMember(member: Member, sessionId: string): Promise<ReadingSessionHead | null> {
	const [row] = await db
		.select({
			id: chargeSessions.id,
			name: chargeSessions.name,
			workshopId: chargeSessions.workshopId,
			packId: chargeSessions.packId,
			packName: packs.name,
			status: chargeSessions.status,
			series: packs.series,
			packOwnerId: packs.packOwnerId
		})
		.from(chargeSessions)
		.innerJoin(packs, eq(packs.id, chargeSessions.packId))
		.where(and(eq(chargeSessions.id, sessionId), eq(chargeSessions.workshopId, member.workshop.id)));
	if (!row || !canSeePack(member, { workshopId: row.workshopId, packOwnerId: row.packOwnerId })) return null;
	return row;
}

const notFound = { ok: false as const, status: 404 as const, message: 'Not found', errors: [] };

/**
 * Stores a batch of readings: every row is checked first (inputs have passed readingInputSchema;
 * here the pack's groups and the session's status), then one insert over unnest()ed columns
 * (PostgreSQL takes at most 65,535 parameters a statement; these are a dozen whatever the size).
 * A clientId already stored for the session is a duplicate, answered with the stored id. Each
 * reading is attached to the step running for its group (or the whole-pack step) at its time;
 * the session's due reading is cleared and live views are told, in the same transaction.
 */
export async function logReadings(
	actor: ReadingActor,
	sessionId: string,
	inputs: ReadingInput[],
	source: ReadingSource
): Promise<LogReadingsResult> {
	let head: { packId: string; series: number; workshopId: string };
	if (actor.kind === 'member') {
		requirePermission(actor.member, 'readings.log');
		const found = await sessionForMember(actor.member, sessionId);
		if (!found) return notFound;
		head = found;
	} else {
		// The token was checked against this session (deviceFromBearer); never trust a mismatch.
		if (actor.sessionId !== sessionId) return notFound;
		head = actor;
	}
	if (inputs.length === 0) return { ok: false, status: 400, message: 'Send at least one reading.', errors: [] };

	const problems = packProblems(inputs, head.series);
	if (problems.length > 0) {
		const n = problems.length;
		return {
			ok: false,
			status: 400,
			message: `Nothing was stored: ${n === ROW_PROBLEMS_LISTED ? 'at least ' : ''}${n} reading${n === 1 ? ' is' : 's are'} not right for this pack.`,
			errors: problems
		};
	}

	const enteredBy = actor.kind === 'member' ? actor.member.user.id : null;
	const tokenId = actor.kind === 'device' ? actor.tokenId : null;

	const allowed = [...acceptsReadings[source]];
	// Marks a device's token used at most once a minute (no write per post).
	const markToken =
		actor.kind === 'device' && (!actor.lastUsedAt || Date.now() - actor.lastUsedAt.getTime() > 60_000)
			? sql`, tok as (update device_tokens set last_used_at = now() where id = ${actor.tokenId}
				and (last_used_at is null or last_used_at < now() - interval '1 minute') and exists (select 1 from ins) returning 1)`
			: sql``;
	// One statement, so atomic without a transaction and one round trip: a key-share lock on the
	// session (batches of one session go in side by side, while a status change, which locks the
	// row for update, waits for them — and they for it), the insert if the status allows it, the
	// due mark cleared (only written when set), and the notice for live views — the same one
	// notifySession sends, delivered at commit.
	// The readings are judged right after the commit (alerts/judge.ts), once for all the posts of
	// the session that arrive together.
	const [result] = (await executePrepared(sql`
		with s as (select status from charge_sessions where id = ${sessionId} for key share),
		ins as (
				insert into readings (session_id, pack_id, group_id, step_id, taken_at, volts, amps, temp_c, ambient_c,
					note, source, entered_by, device_token_id, client_id)
				select distinct on (r.n) ${sessionId}, ${head.packId}, g.id, coalesce(gs.id, ps.id), r.taken_at, r.volts, r.amps,
					r.temp_c, r.ambient_c, r.note, ${source}::reading_source, ${enteredBy}, ${tokenId}, r.client_id
				-- Every column goes as text[] (postgres.js serialises text arrays whatever the element type).
				from (select u.client_id, nullif(u.group_index, '')::int as group_index, u.taken_at::timestamptz as taken_at,
					u.volts::float8 as volts, u.amps::float8 as amps, u.temp_c::float8 as temp_c,
					u.ambient_c::float8 as ambient_c, u.note, u.n
				from unnest(
					${sql.param(inputs.map((r) => r.clientId))}::text[],
					${sql.param(inputs.map((r) => String(r.groupIndex ?? '')))}::text[],
					${sql.param(inputs.map((r) => r.takenAt))}::text[],
					${sql.param(inputs.map((r) => numberText(r.volts)))}::text[],
					${sql.param(inputs.map((r) => numberText(r.amps)))}::text[],
					${sql.param(inputs.map((r) => numberText(r.tempC)))}::text[],
					${sql.param(inputs.map((r) => numberText(r.ambientC)))}::text[],
					${sql.param(inputs.map((r) => r.note ?? ''))}::text[]
				) with ordinality as u(client_id, group_index, taken_at, volts, amps, temp_c, ambient_c, note, n)) r
				cross join s
				left join pack_groups g on g.pack_id = ${head.packId} and g.index = r.group_index
				-- The step running at the reading's time: the group's own (equality join on the group, cheap
				-- for 100,000 rows), else a whole-pack step (a session has a handful at most).
				left join session_steps gs on gs.session_id = ${sessionId} and gs.group_id = g.id
					and gs.actual_start <= r.taken_at and (gs.actual_end is null or gs.actual_end >= r.taken_at)
				left join session_steps ps on ps.session_id = ${sessionId} and ps.group_id is null
					and ps.actual_start <= r.taken_at and (ps.actual_end is null or ps.actual_end >= r.taken_at)
				where s.status::text = any(${sql.param(allowed)}::text[])
				order by r.n, gs.actual_start desc nulls last, ps.actual_start desc nulls last
				on conflict (session_id, client_id) do nothing
				returning client_id, id, taken_at),
		due as (update charge_sessions set reading_due_at = null
			where id = ${sessionId} and reading_due_at is not null and exists (select 1 from ins) returning 1)${markToken}
		select (select status from s) as status,
			coalesce((select json_agg(json_build_array(client_id, id)) from ins), '[]'::json) as stored,
			(select pg_notify(${SESSION_EVENTS_CHANNEL}, json_build_object(
					'sessionId', ${sessionId}::text, 'workshopId', ${head.workshopId}::text, 'kind', 'reading',
					'count', x.n, 'newest', to_char(x.newest at time zone 'UTC', 'YYYY-MM-DD"T"HH24:MI:SS.MS"Z"'))::text)
				from (select count(*) as n, max(taken_at) as newest from ins) x where x.n > 0) as notified`)) as unknown as {
		status: ChargeSession['status'] | null;
		stored: [string, number | string][];
	}[];

	if (!result || result.status === null) return notFound;
	if (!acceptsReadings[source].has(result.status))
		return { ok: false, status: 409, message: refusedStatus(result.status, source), errors: [] };
	// Judged also when every reading is a repeat: a client sends again when it got no answer, which
	// may be because this process stopped between the commit and the judgement.
	await judgeSession(sessionId);

	const idByClient = new Map<string, number>(result.stored.map(([clientId, id]) => [clientId, Number(id)]));
	const storedIds = new Set(idByClient.keys());
	const missing = [...new Set(inputs.map((r) => r.clientId).filter((c) => !storedIds.has(c)))];
	if (missing.length > 0) {
		// Duplicates: stored before (by an earlier or a concurrent post, which committed before ours went on).
		const earlier = (await db.execute(sql`
			select client_id, id from readings
			where session_id = ${sessionId} and client_id = any(${sql.param(missing)}::text[])`)) as unknown as {
			client_id: string;
			id: string | number;
		}[];
		for (const row of earlier) idByClient.set(row.client_id, Number(row.id));
	}

	const stored = storedIds.size;
	const seen = new Set<string>();
	const answer = inputs.map((r) => {
		const duplicate = !storedIds.has(r.clientId) || seen.has(r.clientId);
		seen.add(r.clientId);
		return { clientId: r.clientId, id: idByClient.get(r.clientId)!, duplicate };
	});
	return { ok: true, stored, duplicates: inputs.length - stored, readings: answer };
}

/** A stored reading as the API and pages show it. */
export type ReadingView = {
	id: number;
	clientId: string;
	groupIndex: number | null;
	stepId: string | null;
	takenAt: string;
	volts: number | null;
	amps: number | null;
	tempC: number | null;
	ambientC: number | null;
	note: string;
	source: ReadingSource;
	/** The person who entered it, or the device token's name. */
	by: string | null;
	receivedAt: string;
	editedAt: string | null;
};

const viewColumns = {
	id: readings.id,
	clientId: readings.clientId,
	groupIndex: packGroups.index,
	stepId: readings.stepId,
	takenAt: readings.takenAt,
	volts: readings.volts,
	amps: readings.amps,
	tempC: readings.tempC,
	ambientC: readings.ambientC,
	note: readings.note,
	source: readings.source,
	personName: users.name,
	deviceName: deviceTokens.name,
	receivedAt: readings.receivedAt,
	editedAt: readings.editedAt
};

type ViewRow = { [K in keyof typeof viewColumns]: unknown } & Record<string, unknown>;

function toView(row: ViewRow): ReadingView {
	const r = row as unknown as {
		id: number; clientId: string; groupIndex: number | null; stepId: string | null; takenAt: Date;
		volts: number | null; amps: number | null; tempC: number | null; ambientC: number | null; note: string;
		source: ReadingSource; personName: string | null; deviceName: string | null; receivedAt: Date; editedAt: Date | null;
	};
	return {
		id: Number(r.id),
		clientId: r.clientId,
		groupIndex: r.groupIndex,
		stepId: r.stepId,
		takenAt: r.takenAt.toISOString(),
		volts: r.volts,
		amps: r.amps,
		tempC: r.tempC,
		ambientC: r.ambientC,
		note: r.note,
		source: r.source,
		by: r.personName ?? (r.deviceName ? `logger ${r.deviceName}` : null),
		receivedAt: r.receivedAt.toISOString(),
		editedAt: r.editedAt ? r.editedAt.toISOString() : null
	};
}

/**
 * The session's readings taken at or after `since`, oldest first; with more than `limit`
 * (default 2000), the newest `limit` of them. null when the member may not see the session.
 */
export async function listReadings(
	member: Member,
	sessionId: string,
	options: { since?: Date; limit?: number } = {}
): Promise<ReadingView[] | null> {
	requirePermission(member, 'sessions.view');
	const head = await sessionForMember(member, sessionId);
	if (!head) return null;
	const limit = Math.min(Math.max(1, Math.floor(options.limit ?? 2000)), 10_000);
	const rows = await db
		.select(viewColumns)
		.from(readings)
		.leftJoin(packGroups, eq(packGroups.id, readings.groupId))
		.leftJoin(users, eq(users.id, readings.enteredBy))
		.leftJoin(deviceTokens, eq(deviceTokens.id, readings.deviceTokenId))
		.where(and(eq(readings.sessionId, sessionId), options.since ? gte(readings.takenAt, options.since) : undefined))
		.orderBy(desc(readings.takenAt), desc(readings.id))
		.limit(limit);
	return rows.reverse().map(toView);
}

export type EditReadingResult =
	| { ok: true; reading: ReadingView }
	| { ok: false; status: 400 | 404 | 409; message: string };

const editable = ['takenAt', 'volts', 'amps', 'tempC', 'ambientC', 'note'] as const;

/**
 * Changes a stored reading (readings.log). The row is locked, the original values of every field
 * sent go to audit_events (kind reading.edit, before/after) with the change, and the reading is
 * marked edited; live views are told.
 */
export async function editReading(
	member: Member,
	sessionId: string,
	readingId: number,
	patch: ReadingPatch
): Promise<EditReadingResult> {
	requirePermission(member, 'readings.log');
	const head = await sessionForMember(member, sessionId);
	if (!head) return { ok: false, status: 404, message: 'Not found' };
	let changes: AlertChanges | null = null;
	const out = await db.transaction(async (tx: Tx) => {
		const [session] = await tx
			.select({ status: chargeSessions.status })
			.from(chargeSessions)
			.where(eq(chargeSessions.id, sessionId))
			.for('key share');
		if (!session) return { ok: false as const, status: 404 as const, message: 'Not found' };
		if (session.status === 'draft' || session.status === 'stopped')
			return { ok: false as const, status: 409 as const, message: refusedStatus(session.status, 'hand') };
		const [row] = await tx
			.select()
			.from(readings)
			.where(and(eq(readings.id, readingId), eq(readings.sessionId, sessionId)))
			.for('update');
		if (!row) return { ok: false as const, status: 404 as const, message: 'No such reading in this session.' };

		const next = { ...row };
		const before: Record<string, unknown> = {};
		const after: Record<string, unknown> = {};
		for (const key of editable) {
			if (!(key in patch)) continue;
			const value = key === 'takenAt' ? new Date(patch.takenAt!) : patch[key];
			const old = row[key];
			const same = old instanceof Date && value instanceof Date ? old.getTime() === value.getTime() : old === value;
			if (same) continue;
			before[key] = old instanceof Date ? old.toISOString() : old;
			after[key] = value instanceof Date ? value.toISOString() : value;
			(next as Record<string, unknown>)[key] = value;
		}
		if (![next.volts, next.amps, next.tempC, next.ambientC].some((v) => v !== null))
			return { ok: false as const, status: 400 as const, message: 'A reading keeps at least one value: volts, amps, cell or room temperature.' };
		const packMax = Math.min(head.series * READING_LIMITS.cellVoltsMax, READING_LIMITS.packVoltsMax);
		if (next.volts !== null && next.volts > (row.groupId ? READING_LIMITS.groupVoltsMax : packMax))
			return {
				ok: false as const,
				status: 400 as const,
				message: row.groupId
					? `A group's reading is volts per cell, at most ${READING_LIMITS.groupVoltsMax} V.`
					: `A whole-pack reading of this ${head.series}S pack is at most ${packMax} V.`
			};

		if (Object.keys(after).length > 0) {
			const now = new Date();
			await tx
				.update(readings)
				.set({
					takenAt: next.takenAt,
					volts: next.volts,
					amps: next.amps,
					tempC: next.tempC,
					ambientC: next.ambientC,
					note: next.note,
					editedAt: now,
					editedBy: member.user.id
				})
				.where(eq(readings.id, readingId));
			// A new time may fall in another step of its group (or none): attach it as logReadings does.
			if ('takenAt' in after) {
				await tx.execute(sql`
					update readings r set step_id = (
						select s.id from session_steps s
						where s.session_id = r.session_id
							and (s.group_id = r.group_id or s.group_id is null)
							and s.actual_start <= r.taken_at and (s.actual_end is null or s.actual_end >= r.taken_at)
						order by (s.group_id is null), s.actual_start desc
						limit 1)
					where r.id = ${readingId}`);
			}
			await writeAudit(tx, {
				workshopId: head.workshopId,
				actorId: member.user.id,
				actorLabel: member.user.name,
				kind: 'reading.edit',
				packId: head.packId,
				sessionId,
				subjectType: 'reading',
				subjectId: String(readingId),
				before,
				after
			});
			await notifySession(tx, { sessionId, workshopId: head.workshopId, kind: 'reading', count: 0, newest: next.takenAt.toISOString() });
			// A corrected value is judged again: it may raise an alert or clear one.
			changes = await evaluateReadingsInTx(tx, sessionId, now);
		}
		const [view] = await tx
			.select(viewColumns)
			.from(readings)
			.leftJoin(packGroups, eq(packGroups.id, readings.groupId))
			.leftJoin(users, eq(users.id, readings.enteredBy))
			.leftJoin(deviceTokens, eq(deviceTokens.id, readings.deviceTokenId))
			.where(eq(readings.id, readingId));
		return { ok: true as const, reading: toView(view) };
	});
	await afterCommit(changes);
	return out;
}

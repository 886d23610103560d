/**
 * Raising alerts. Every stored reading is judged by the same rules as the run screen's tiles
 * (run-view.ts `evaluateRun`, over the engine's evaluateReadings): a post's readings right after
 * its commit, shared with the posts that arrive together (judge.ts), an edit or a file import in
 * its own transaction. The clock job judges running sessions with the engine's checkClock, and
 * their readings again. What was found is reconciled with the session's active alerts (engine
 * `reconcileAlerts`): a new condition, or one turned louder, is inserted — judgements of a session
 * take its row lock in turn, and the partial unique index on active alerts stands behind that —, a
 * condition gone is cleared, one still there is only marked seen.
 *
 * Each new alert's deliveries (alert_deliveries: one row per person and channel, from the
 * session's watchers and their settings, alert-routing.ts) are written in the same transaction:
 * the outbox. After the commit `dispatchDeliveries` hands them to pg-boss; rows a crash left
 * behind are picked up by the alert clock's sweep (deliver.ts). So nothing committed is lost.
 */
import { and, eq, getTableColumns, inArray, isNull, lt, sql, type SQL } from 'drizzle-orm';
import type { PgTable } from 'drizzle-orm/pg-core';
import { alertAction, alertTitle, alertUnit } from '$lib/alert-words';
import { routeAlert } from '$lib/alert-routing';
import { checkClock, reconcileAlerts, type ActiveAlert, type AlertDraft, type AlertSeverity, type Limits } from '$lib/engine';
import type { Tx } from '../db';
import { alertDeliveries, alerts, cellSpecs, chargeSessions, chemistryProfiles, packs } from '../db/schema';
import type { DeliveryReason, StoredAlertKind } from '../db/schema';
import { newId } from '../ids';
import { chemistryOf } from '../sessions/plan-context';
import { notifySession } from '../sessions/notify';
import { evaluateRun, sessionLimits, type RunInput, type RunReading, type RunStepInput } from '../sessions/run-view';
import { sessionRecipients, type Recipient } from './recipients';

/** What a reading can raise or clear. */
export const READING_KINDS = ['over-voltage', 'under-voltage', 'over-temperature', 'cold-charge', 'heat-rise', 'drift', 'step-finished'] as const;
/** What the clock can raise or clear. */
export const CLOCK_KINDS = ['reading-overdue', 'step-overrun'] as const;

/** A condition found, with the group's row id (null: the whole pack or session) and its label. */
export type Found = AlertDraft & { groupRowId: string | null; groupLabel: string | null; readingId: number | null; details?: Record<string, unknown> };

export type RaisedAlert = { id: string; kind: StoredAlertKind; severity: AlertDraft['severity']; sessionId: string };

/** What an evaluation changed; `deliveries` are the pending outbox rows to dispatch after commit. */
export type AlertChanges = { raised: RaisedAlert[]; cleared: number; deliveries: string[] };

const none = (): AlertChanges => ({ raised: [], cleared: 0, deliveries: [] });

export type SessionHead = {
	id: string;
	workshopId: string;
	packId: string;
	status: RunInput['session']['status'];
	limits: Limits | null;
};

/**
 * Everything the run screen's rules need, read in `tx` (side by side on one connection): the
 * session, pack and chemistry, groups, steps, the newest four readings of each group and of the
 * whole pack, and the newest room temperature among the last 200 readings. A 100,000-reading
 * session costs a few index probes per group.
 */
/** A table's row from `to_jsonb(row)`: its columns by their TypeScript names, times as Dates. */
function fromRow<T extends PgTable>(table: T, json: Record<string, unknown>): T['$inferSelect'] {
	const out: Record<string, unknown> = {};
	for (const [key, column] of Object.entries(getTableColumns(table))) {
		const value = json[column.name];
		out[key] = value === null || value === undefined ? null : column.columnType === 'PgTimestamp' ? new Date(value as string) : value;
	}
	return out as T['$inferSelect'];
}

/** A transaction, or the pool through prepared statements (db/index.ts `prepared`). */
type Runner = { execute: (query: SQL) => PromiseLike<readonly unknown[]> };

async function loadRunInput(
	tx: Runner,
	sessionId: string,
	now: Date,
	/** Also answer whether no judgement holds the session's row right now (`free`). */
	probeLock = false
): Promise<{ head: SessionHead; input: RunInput; active: ActiveAlert[]; lastSeen: Map<string, number>; free: boolean } | null> {
	// One statement: this runs on every post. The newest readings are read in index order
	// (readings_session_group_taken_idx) with no tie-break on id: a logger sending many readings
	// with one time stamp would make a tie-break sort them all. The session, pack, cell spec and
	// chemistry profile come as JSON rows, read back through the tables' own column lists.
	const [rest] = await tx.execute(sql`
		select
			to_jsonb(s) as session, to_jsonb(p) as pack, to_jsonb(c) as spec, to_jsonb(cp) as profile,
			(select coalesce(json_agg(json_build_array(g.id, g.index) order by g.index), '[]')
				from pack_groups g join charge_sessions s on s.pack_id = g.pack_id where s.id = ${sessionId}) as groups,
			(select coalesce(json_agg(json_build_object('id', st.id, 'position', st.position, 'groupId', st.group_id,
					'channelId', st.channel_id, 'channelLabel', st.channel_label, 'role', st.role, 'setVolts', st.set_volts,
					'amps', st.amps, 'ah', st.ah, 'expectedStart', st.expected_start, 'expectedEnd', st.expected_end,
					'actualStart', st.actual_start, 'actualEnd', st.actual_end, 'status', st.status,
					'restReadingDueAt', st.rest_reading_due_at) order by st.position), '[]')
				from session_steps st where st.session_id = ${sessionId}) as steps,
			(select coalesce(json_agg(json_build_array(a.id, a.kind, a.group_id, a.severity, a.last_seen_at)), '[]')
				from alerts a where a.session_id = ${sessionId} and a.cleared_at is null) as active,
			${probeLock ? sql`exists (select 1 from charge_sessions f where f.id = ${sessionId} for no key update skip locked)` : sql`true`} as free,
			(select coalesce(json_agg(json_build_array(r.id, r.group_id, r.step_id, r.taken_at, r.volts, r.amps, r.temp_c, r.ambient_c)), '[]')
				from (
					select x.* from charge_sessions s
					join pack_groups g on g.pack_id = s.pack_id
					cross join lateral (
						select * from readings y where y.session_id = s.id and y.group_id = g.id order by y.taken_at desc limit 4
					) x
					where s.id = ${sessionId}
					union all
					(select * from readings where session_id = ${sessionId} and group_id is null order by taken_at desc limit 4)
					union all
					(select * from (select * from readings where session_id = ${sessionId} order by taken_at desc limit 200) recent
						where ambient_c is not null order by taken_at desc limit 1)
				) r) as readings
		from charge_sessions s
		join packs p on p.id = s.pack_id
		join cell_specs c on c.id = p.cell_spec_id
		left join chemistry_profiles cp on cp.id = c.chemistry_profile_id
		where s.id = ${sessionId}`);
	if (!rest) return null;
	type Json = {
		session: Record<string, unknown>;
		pack: Record<string, unknown>;
		spec: Record<string, unknown>;
		profile: Record<string, unknown> | null;
		groups: [string, number][];
		steps: Record<string, unknown>[];
		active: [string, string, string | null, AlertSeverity, string][];
		readings: unknown[][];
		free: boolean;
	};
	const data = rest as unknown as Json;
	const date = (v: unknown) => (v === null || v === undefined ? null : new Date(v as string));
	const groups = data.groups.map(([id, index]) => ({ id, index }));
	const steps = data.steps.map((st) => ({
		...(st as Omit<RunStepInput, 'expectedStart' | 'expectedEnd' | 'actualStart' | 'actualEnd' | 'restReadingDueAt'>),
		expectedStart: date(st.expectedStart)!,
		expectedEnd: date(st.expectedEnd)!,
		actualStart: date(st.actualStart),
		actualEnd: date(st.actualEnd),
		restReadingDueAt: date(st.restReadingDueAt)
	}));
	const seen = new Set<number>();
	const readings: RunReading[] = [];
	for (const [id, groupId, stepId, takenAt, volts, amps, tempC, ambientC] of data.readings) {
		if (seen.has(Number(id))) continue;
		seen.add(Number(id));
		readings.push({
			id: Number(id),
			groupId: (groupId as string | null) ?? null,
			stepId: (stepId as string | null) ?? null,
			takenAt: new Date(takenAt as string),
			volts: volts as number | null,
			amps: amps as number | null,
			tempC: tempC as number | null,
			ambientC: ambientC as number | null
		});
	}
	const session = fromRow(chargeSessions, data.session);
	const pack = fromRow(packs, data.pack);
	const spec = fromRow(cellSpecs, data.spec);
	const profile = data.profile ? fromRow(chemistryProfiles, data.profile) : null;
	const input: RunInput = {
		session,
		pack: { series: pack.series, parallel: pack.parallel, chemistry: chemistryOf(spec, profile), cellCapacityAh: spec.capacityAh },
		groups,
		steps,
		readings,
		now
	};
	return {
		head: { id: session.id, workshopId: session.workshopId, packId: session.packId, status: session.status, limits: sessionLimits(input) },
		input,
		active: data.active.map(([id, kind, groupId, severity]) => ({ id, kind, groupId, severity })),
		lastSeen: new Map(data.active.map(([id, , , , seen]) => [id, Date.parse(seen)])),
		free: data.free
	};
}

async function activeAlerts(tx: Tx, sessionId: string) {
	return tx
		.select({ id: alerts.id, kind: alerts.kind, groupId: alerts.groupId, severity: alerts.severity })
		.from(alerts)
		.where(and(eq(alerts.sessionId, sessionId), isNull(alerts.clearedAt)));
}

/**
 * Judges the session's newest readings and raises, clears or keeps its reading alerts. Posts call it
 * through judge.ts right after their commit; an edit or a file import calls it in the transaction
 * that changed the readings. Dispatch `deliveries` after the commit.
 */
export async function evaluateReadingsInTx(tx: Tx, sessionId: string, now = new Date()): Promise<AlertChanges> {
	// One judgement of a session at a time (in any instance): the next one waits and then sees what
	// this one raised. The lock lets posts go on inserting (their key-share lock does not conflict).
	await tx.execute(sql`select 1 from charge_sessions where id = ${sessionId} for no key update`);
	const loaded = await loadRunInput(tx, sessionId, now);
	if (!loaded || !loaded.head.limits) return none();
	return storeConditions(tx, loaded.head, readingConditions(loaded.input), READING_KINDS, now, loaded.active);
}

/** How often an alert still found is noted as seen (storeConditions). */
const SEEN_EVERY_MS = 60_000;

/**
 * True when judging the session's newest readings would change nothing stored: what they show
 * matches its active alerts, none of which is due to be noted as seen, and no other judgement of
 * the session was running when this one read (so none is about to change the alerts it read). One
 * statement, no transaction: the common answer for a logger posting every second. On false the
 * caller judges under the session's row lock (evaluateReadingsInTx).
 */
export async function readingsUnchanged(run: Runner, sessionId: string, now = new Date()): Promise<boolean> {
	const loaded = await loadRunInput(run, sessionId, now, true);
	if (!loaded || !loaded.head.limits) return true;
	if (!loaded.free) return false;
	const found = readingConditions(loaded.input);
	const plan = reconcileAlerts(
		loaded.active,
		found.map((f) => ({ ...f, groupId: f.groupRowId })),
		{ kinds: READING_KINDS }
	);
	const due = now.getTime() - SEEN_EVERY_MS;
	return plan.raise.length === 0 && plan.clear.length === 0 && plan.seen.every((id) => (loaded.lastSeen.get(id) ?? 0) >= due);
}

/** What the run screen's rules find in the newest readings, keyed by the group's row id. */
function readingConditions(input: RunInput): Found[] {
	const { drafts } = evaluateRun(input, { draftsOnly: true });
	const idOfIndex = new Map(input.groups.map((g) => [String(g.index), g.id]));
	const newestOf = (groupId: string | null) => {
		let best: RunReading | null = null;
		for (const r of input.readings) if (r.groupId === groupId && (!best || r.takenAt > best.takenAt)) best = r;
		return best?.id ?? null;
	};
	const found: Found[] = [
		...drafts.groups.map((d) => {
			const rowId = d.groupId !== undefined ? (idOfIndex.get(d.groupId) ?? null) : null;
			return { ...d, groupRowId: rowId, groupLabel: rowId ? d.groupId! : null, readingId: newestOf(rowId) };
		}),
		...drafts.pack.map((d) => ({
			...d,
			message: d.message.replace(/^Group pack/, 'The pack'),
			groupRowId: null,
			groupLabel: null,
			readingId: newestOf(null)
		}))
	];
	return found;
}

/**
 * The clock's rules for one session (run under its row lock by the clock job): a reading overdue
 * while it runs, a running step past its expected time by the overrun factor. A session that is
 * not running has neither, so its clock alerts (and a step-finished note) are cleared.
 */
export async function evaluateClockInTx(tx: Tx, sessionId: string, now = new Date()): Promise<AlertChanges> {
	const loaded = await loadRunInput(tx, sessionId, now);
	if (!loaded || !loaded.head.limits) return none();
	const { head, input } = loaded;
	const found: Found[] = [];
	if (head.status === 'running') {
		const limits: Limits = { ...(head.limits as Limits), readingIntervalMinutes: input.session.readingIntervalMinutes };
		let last: Date | null = null;
		for (const r of input.readings) if (!last || r.takenAt > last) last = r.takenAt;
		const overdue = checkClock({ limits, lastReadingAt: last, stepStartedAt: input.session.startedAt ?? undefined, now }).filter(
			(a) => a.kind === 'reading-overdue'
		);
		found.push(...overdue.map((d) => ({ ...d, groupRowId: null, groupLabel: null, readingId: null })));
		const indexOf = new Map(input.groups.map((g) => [g.id, g.index]));
		for (const step of input.steps) {
			if (step.status !== 'running' || !step.actualStart) continue;
			const expectedHours = (step.expectedEnd.getTime() - step.expectedStart.getTime()) / 3_600_000;
			for (const d of checkClock({ limits, stepStartedAt: step.actualStart, stepExpectedHours: expectedHours, now })) {
				if (d.kind !== 'step-overrun') continue;
				const label = step.groupId ? String(indexOf.get(step.groupId) ?? '') || null : null;
				found.push({ ...d, groupId: label ?? undefined, groupRowId: step.groupId, groupLabel: label, readingId: null });
			}
		}
	}
	const kinds = head.status === 'running' ? CLOCK_KINDS : ([...CLOCK_KINDS, 'step-finished'] as const);
	return storeConditions(tx, head, found, kinds, now, loaded.active);
}

/**
 * Reconciles what an evaluation of `kinds` found with the session's active alerts and stores the
 * outcome: new alerts with their outbox rows for the session's watchers, cleared ones, and the
 * live views' notice. Any rule's evaluation ends here (readings, the clock, the drift between sessions).
 */
export async function storeConditions(
	tx: Tx,
	head: SessionHead,
	found: Found[],
	kinds: readonly string[],
	now: Date,
	/** The session's active alerts, when the caller read them already (in this transaction). */
	known?: ActiveAlert[]
): Promise<AlertChanges> {
	const active = known ?? (await activeAlerts(tx, head.id));
	// The engine keys a condition by kind and group: give it the group's row id.
	const plan = reconcileAlerts(
		active,
		found.map((f) => ({ ...f, groupId: f.groupRowId })),
		{ kinds }
	);
	const changes = none();
	if (plan.clear.length) {
		const cleared = await tx
			.update(alerts)
			.set({ clearedAt: now })
			.where(and(inArray(alerts.id, plan.clear), isNull(alerts.clearedAt)))
			.returning({ id: alerts.id });
		changes.cleared = cleared.length;
	}
	// Seen again: noted at most once a minute, so a logger posting every second does not rewrite
	// (and lock) the same alert rows on every post.
	if (plan.seen.length) {
		await tx
			.update(alerts)
			.set({ lastSeenAt: now })
			.where(and(inArray(alerts.id, plan.seen), lt(alerts.lastSeenAt, new Date(now.getTime() - SEEN_EVERY_MS))));
	}
	for (const f of plan.raise) {
		const unit = alertUnit(f.kind, head.limits ? { threshold: f.threshold, limits: head.limits } : undefined);
		const [row] = await tx
			.insert(alerts)
			.values({
				id: newId(),
				workshopId: head.workshopId,
				packId: head.packId,
				sessionId: head.id,
				groupId: f.groupRowId,
				groupKey: f.groupRowId ?? '',
				kind: f.kind as StoredAlertKind,
				severity: f.severity,
				title: alertTitle(f.kind, f.groupLabel),
				message: f.message.slice(0, 2000),
				action: alertAction(f.kind, f.severity, f.groupLabel),
				value: Number.isFinite(f.value) ? f.value : null,
				threshold: Number.isFinite(f.threshold) ? f.threshold : null,
				unit,
				readingId: f.readingId,
				details: f.details ?? {},
				openedAt: now,
				lastSeenAt: now
			})
			.onConflictDoNothing({
				target: [alerts.sessionId, alerts.kind, alerts.groupKey, alerts.severity],
				where: sql`cleared_at is null`
			})
			.returning({ id: alerts.id, kind: alerts.kind, severity: alerts.severity });
		// Another instance raised it a moment ago: theirs is the one, with its deliveries.
		if (!row) continue;
		changes.raised.push({ id: row.id, kind: row.kind, severity: row.severity, sessionId: head.id });
	}
	if (changes.raised.length) {
		const { timeZone, recipients } = await sessionRecipients(tx, head.id);
		for (const alert of changes.raised) {
			const people = recipients.map((person) => ({ person, reason: (person.onWatch ? 'on-watch' : 'watcher') as DeliveryReason }));
			changes.deliveries.push(...(await queueDeliveries(tx, alert, people, timeZone, now)));
		}
	}
	if (changes.raised.length || changes.cleared) {
		await notifySession(tx, { sessionId: head.id, workshopId: head.workshopId, kind: 'alert' });
	}
	return changes;
}

/**
 * Writes an alert's outbox rows for these people: one per person and channel they chose, pending,
 * or held (quiet time, information alerts only) or gone (push chosen, no device) so the log says
 * why nothing went. Returns the pending rows' ids.
 */
export async function queueDeliveries(
	tx: Tx,
	alert: { id: string; kind: string; severity: AlertDraft['severity'] },
	people: { person: Recipient; reason: DeliveryReason }[],
	timeZone: string,
	now: Date
): Promise<string[]> {
	const rows = people.flatMap(({ person, reason }) =>
		routeAlert(alert, person, reason, now, timeZone).map((route) => ({
			id: newId(),
			alertId: alert.id,
			userId: person.userId,
			channel: route.channel,
			reason,
			status: route.status,
			log:
				route.status === 'pending'
					? []
					: [{ at: now.toISOString(), ok: false, detail: route.status === 'held' ? 'Held back: quiet time (information only).' : 'No device has push turned on.' }],
			createdAt: now
		}))
	);
	if (!rows.length) return [];
	const inserted = await tx
		.insert(alertDeliveries)
		.values(rows)
		.onConflictDoNothing()
		.returning({ id: alertDeliveries.id, status: alertDeliveries.status });
	return inserted.filter((r) => r.status === 'pending').map((r) => r.id);
}

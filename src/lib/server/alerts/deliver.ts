/**
 * Sending alerts: one pg-boss job per outbox row (alert_deliveries), at least once.
 *
 * A job locks its row (skip locked: a second job for the same row leaves it alone), sends by
 * e-mail (nodemailer) or web push (every device the person subscribed), and writes the attempt to
 * the row's log in its own transaction; a failed attempt then throws, so pg-boss tries again with
 * exponential backoff (DELIVERY_RETRY: about two hours of retries, which outlasts a mail server or
 * push service being down for minutes). The last failure marks the row failed.
 *
 * The alert clock (every minute) re-queues rows a crash left unqueued, escalates critical alerts
 * nobody acknowledged within the workshop's escalation time to every owner, and runs the clock's
 * rules (reading overdue, step overrun) on running sessions.
 */
import { and, eq, inArray, isNull, lt, or, sql } from 'drizzle-orm';
import { escalationDue } from '$lib/engine';
import { db } from '../db';
import { alertDeliveries, alerts, chargeSessions, packs, pushSubscriptions, users, workshops } from '../db/schema';
import type { DeliveryAttempt } from '../db/schema';
import { publicOrigin } from '../env';
import { enqueue, ensureQueue, wakeWorkers } from '../jobs/boss';
import { sendMail } from '../mail';
import { sendPush } from '../push';
import { alertMail, alertPush, type AlertForMessage } from './alert-mail';
import { CLOCK_KINDS, evaluateClockInTx, evaluateReadingsInTx, queueDeliveries, type AlertChanges } from './raise';
import { workshopOwners } from './recipients';

/** pg-boss retries of a delivery: 12 after the first, 2 s doubling (with jitter) — about 2¼ hours in all. */
export const DELIVERY_RETRY = { retryLimit: 12, retryDelay: 2, retryBackoff: true } as const;
/**
 * The delivery queue's options: also given when this process creates the queue by sending to it.
 * An attempt ends within about 25 s (the mail transport's timeouts in mail.ts, push's 10 s), so a
 * job still active after 30 s belongs to a process that died mid-attempt (a crash, a kill): pg-boss's
 * maintenance (every 10 s, boss.ts) then fails it and it goes again. With 120 s here, a critical
 * alert raised just before a crash reached nobody for two to four minutes (tests/e2e/crash-safety).
 */
export const DELIVERY_QUEUE_OPTIONS = { ...DELIVERY_RETRY, expireInSeconds: 30 };
/** How often a worker asks for deliveries (pg-boss's least), when nothing woke it sooner. */
export const DELIVERY_POLL_SECONDS = 0.5;
/** Deliveries a worker takes at once and sends side by side: one alert's e-mails and pushes together. */
export const DELIVERY_BATCH = 20;
/** An unqueued pending row older than this is the crash's leftover, not one being dispatched now. */
const SWEEP_AFTER_MS = 30_000;

/**
 * Hands pending outbox rows to pg-boss (after the commit that wrote them) and marks them queued.
 * A failure here loses nothing: the alert clock's sweep queues what is left.
 */
export async function dispatchDeliveries(ids: readonly string[]): Promise<void> {
	if (!ids.length) return;
	try {
		await ensureQueue('deliver-alert', DELIVERY_QUEUE_OPTIONS);
		for (const id of ids) await enqueue('deliver-alert', { deliveryId: id });
		// This process's delivery worker, if it runs one, takes them now rather than at its next poll.
		wakeWorkers('deliver-alert');
		await db
			.update(alertDeliveries)
			.set({ queuedAt: new Date() })
			.where(and(inArray(alertDeliveries.id, [...ids]), isNull(alertDeliveries.queuedAt)));
	} catch (e) {
		console.error('Alert deliveries could not be queued now; the alert clock will queue them.', e);
	}
}

/** Dispatches what an evaluation wrote, after its commit. */
export function afterCommit(changes: AlertChanges | null | undefined): Promise<void> {
	return dispatchDeliveries(changes?.deliveries ?? []);
}

type Outcome = { ok: true; detail: string } | { ok: false; gone: boolean; detail: string };

async function loadForMessage(deliveryId: string) {
	const [row] = await db
		.select({
			delivery: alertDeliveries,
			alert: alerts,
			email: users.email,
			packName: packs.name,
			sessionName: chargeSessions.name,
			workshopSlug: workshops.slug,
			workshopName: workshops.name,
			timeZone: workshops.timeZone,
			escalationMinutes: workshops.escalationMinutes
		})
		.from(alertDeliveries)
		.innerJoin(alerts, eq(alerts.id, alertDeliveries.alertId))
		.innerJoin(users, eq(users.id, alertDeliveries.userId))
		.innerJoin(packs, eq(packs.id, alerts.packId))
		.innerJoin(chargeSessions, eq(chargeSessions.id, alerts.sessionId))
		.innerJoin(workshops, eq(workshops.id, alerts.workshopId))
		.where(eq(alertDeliveries.id, deliveryId));
	return row;
}

async function pushToPerson(userId: string, message: AlertForMessage, origin: string): Promise<Outcome> {
	const devices = await db.select().from(pushSubscriptions).where(eq(pushSubscriptions.userId, userId));
	if (!devices.length) return { ok: false, gone: true, detail: 'No device has push turned on.' };
	const payload = alertPush(message, origin);
	const results = await Promise.all(devices.map(async (d) => ({ d, r: await sendPush(d, payload) })));
	const gone = results.filter((x) => !x.r.ok && x.r.gone).map((x) => x.d.id);
	if (gone.length) await db.delete(pushSubscriptions).where(inArray(pushSubscriptions.id, gone));
	const sent = results.filter((x) => x.r.ok).map((x) => x.d.id);
	if (sent.length) await db.update(pushSubscriptions).set({ lastSuccessAt: new Date() }).where(inArray(pushSubscriptions.id, sent));
	const words = (x: (typeof results)[number]) => `${x.d.label || 'a device'}: ${x.r.ok ? 'accepted' : x.r.detail}`;
	const detail = results.map(words).join('; ').slice(0, 500);
	if (sent.length) return { ok: true, detail };
	if (gone.length === devices.length) return { ok: false, gone: true, detail: `${detail} (the push service no longer knows these devices)` };
	return { ok: false, gone: false, detail };
}

const CUT_DETAIL = 'The app stopped during this try; the message may have gone out, so it may arrive twice.';

/**
 * The alert e-mail's Message-ID, the same on every try of one delivery: a copy sent again after a
 * cut-off try is the same message, which mail programs show once.
 */
export function deliveryMessageId(deliveryId: string, origin: string): string {
	return `<${deliveryId}.alert@${new URL(origin).hostname}>`;
}

/**
 * One delivery attempt. Returns what happened; throws after recording a failure that is worth
 * retrying, so that pg-boss tries again later.
 */
export async function deliverOne(deliveryId: string): Promise<'sent' | 'gone' | 'failed' | 'skipped'> {
	const row = await loadForMessage(deliveryId);
	if (!row || row.delivery.status !== 'pending') return 'skipped';
	const { delivery, alert } = row;
	const message: AlertForMessage = {
		...alert,
		packName: row.packName,
		sessionName: row.sessionName,
		workshopSlug: row.workshopSlug,
		workshopName: row.workshopName,
		timeZone: row.timeZone,
		reason: delivery.reason,
		escalationMinutes: row.escalationMinutes
	};
	// Claim the row: a second job for it (the sweep's, or a retry racing one still running) skips.
	// A claim newer than the last logged outcome is a try whose process stopped mid-way (the job
	// expired and came back): it is logged as cut off, since its message may have gone out.
	const claimed = await db.transaction(async (tx) => {
		const [locked] = (await tx.execute(sql`
			select status, last_attempt_at is not null
				and (jsonb_array_length(log) = 0 or last_attempt_at > (log -> -1 ->> 'at')::timestamptz) as cut,
				to_char(last_attempt_at at time zone 'UTC', 'YYYY-MM-DD"T"HH24:MI:SS.MS"Z"') as cut_at
			from alert_deliveries where id = ${deliveryId} for update skip locked`)) as unknown as { status: string; cut: boolean; cut_at: string | null }[];
		if (!locked || locked.status !== 'pending') return null;
		const cut: DeliveryAttempt[] = locked.cut ? [{ at: locked.cut_at!, ok: false, detail: CUT_DETAIL, cut: true }] : [];
		await tx
			.update(alertDeliveries)
			.set({
				lastAttemptAt: new Date(),
				...(cut.length ? { attempts: sql`${alertDeliveries.attempts} + 1`, log: sql`${alertDeliveries.log} || ${JSON.stringify(cut)}::jsonb` } : {})
			})
			.where(eq(alertDeliveries.id, deliveryId));
		return { cuts: cut.length };
	});
	if (!claimed) return 'skipped';

	const origin = publicOrigin();
	let outcome: Outcome;
	try {
		if (delivery.channel === 'email') {
			await sendMail({ ...alertMail(row.email, message, origin), messageId: deliveryMessageId(deliveryId, origin) });
			outcome = { ok: true, detail: 'Accepted by the mail server.' };
		} else {
			outcome = await pushToPerson(delivery.userId, message, origin);
		}
	} catch (e) {
		outcome = { ok: false, gone: false, detail: e instanceof Error ? e.message.slice(0, 300) : String(e).slice(0, 300) };
	}

	const now = new Date();
	const attempt: DeliveryAttempt = { at: now.toISOString(), ok: outcome.ok, detail: outcome.detail };
	const attempts = delivery.attempts + claimed.cuts + 1;
	const lastTry = attempts > DELIVERY_RETRY.retryLimit;
	const status = outcome.ok ? 'sent' : !outcome.ok && outcome.gone ? 'gone' : lastTry ? 'failed' : 'pending';
	await db
		.update(alertDeliveries)
		.set({
			status,
			attempts: sql`${alertDeliveries.attempts} + 1`,
			log: sql`${alertDeliveries.log} || ${JSON.stringify([attempt])}::jsonb`,
			lastAttemptAt: now,
			...(outcome.ok ? { sentAt: now } : {})
		})
		.where(and(eq(alertDeliveries.id, deliveryId), eq(alertDeliveries.status, 'pending')));
	if (status === 'pending') throw new Error(`Delivery ${deliveryId} (${delivery.channel}) failed: ${outcome.detail}`);
	return status;
}

/** Pending rows nobody queued (the process stopped between the commit and the dispatch). */
export async function sweepOutbox(now = new Date()): Promise<number> {
	const rows = await db
		.select({ id: alertDeliveries.id })
		.from(alertDeliveries)
		.where(
			and(eq(alertDeliveries.status, 'pending'), isNull(alertDeliveries.queuedAt), lt(alertDeliveries.createdAt, new Date(now.getTime() - SWEEP_AFTER_MS)))
		)
		.limit(500);
	await dispatchDeliveries(rows.map((r) => r.id));
	return rows.length;
}

/**
 * Critical alerts nobody acknowledged within their workshop's escalation time go to every owner
 * (once: escalated_at is set under the alert's row lock, after reading it again).
 */
export async function escalateAlerts(now = new Date()): Promise<string[]> {
	const candidates = await db
		.select({ id: alerts.id })
		.from(alerts)
		.innerJoin(workshops, eq(workshops.id, alerts.workshopId))
		.where(
			and(
				eq(alerts.severity, 'critical'),
				isNull(alerts.acknowledgedAt),
				isNull(alerts.escalatedAt),
				sql`${alerts.openedAt} <= ${now.toISOString()}::timestamptz - make_interval(mins => ${workshops.escalationMinutes})`
			)
		)
		.limit(200);
	const escalated: string[] = [];
	for (const { id } of candidates) {
		const deliveries = await db.transaction(async (tx) => {
			const [a] = await tx
				.select({ alert: alerts, escalationMinutes: workshops.escalationMinutes, timeZone: workshops.timeZone })
				.from(alerts)
				.innerJoin(workshops, eq(workshops.id, alerts.workshopId))
				.where(eq(alerts.id, id))
				.for('update', { of: alerts });
			if (!a || !escalationDue(a.alert, a.escalationMinutes, now)) return null;
			await tx.update(alerts).set({ escalatedAt: now }).where(eq(alerts.id, id));
			// Every owner; quiet time never holds back a critical alert (alert-routing.ts).
			const owners = await workshopOwners(tx, a.alert.workshopId);
			return queueDeliveries(tx, a.alert, owners.map((person) => ({ person, reason: 'escalation' as const })), a.timeZone, now);
		});
		if (deliveries === null) continue;
		escalated.push(id);
		await dispatchDeliveries(deliveries);
	}
	return escalated;
}

/**
 * The clock's rules on every running session, and on sessions that ended with clock alerts still
 * active (which then clear). Each under the session's row lock. A running session's readings are
 * judged again too: readings whose post stopped between its commit and its judgement (judge.ts)
 * are judged here within the minute.
 */
export async function runAlertClock(now = new Date()): Promise<{ raised: number; cleared: number }> {
	const sessions = await db
		.selectDistinct({ id: chargeSessions.id })
		.from(chargeSessions)
		.leftJoin(alerts, and(eq(alerts.sessionId, chargeSessions.id), isNull(alerts.clearedAt)))
		.where(
			or(
				eq(chargeSessions.status, 'running'),
				and(sql`${chargeSessions.status} <> 'running'`, inArray(alerts.kind, [...CLOCK_KINDS, 'step-finished']))
			)
		);
	let raised = 0;
	let cleared = 0;
	for (const { id } of sessions) {
		const changes = await db.transaction(async (tx) => {
			const [row] = await tx
				.select({ status: chargeSessions.status })
				.from(chargeSessions)
				.where(eq(chargeSessions.id, id))
				.for('update');
			const fromReadings = row?.status === 'running' ? [await evaluateReadingsInTx(tx, id, now)] : [];
			return [...fromReadings, await evaluateClockInTx(tx, id, now)];
		});
		for (const c of changes) {
			raised += c.raised.length;
			cleared += c.cleared;
			await afterCommit(c);
		}
	}
	return { raised, cleared };
}

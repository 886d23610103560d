#!/usr/bin/env node
// `npm run bench`, alert delivery: how long from a reading's POST until the alert's e-mail is
// accepted by the fake SMTP server and its push by the fake push service.
//
// Against a built server running its background jobs in-process with the local fakes on
// (CELLSITTER_FAKES=1, SMTP_URL and FAKES_URL to the fakes): scripts/bench.sh starts both. It copies
// a demo session ("Bench: alerts", its watchers as the demo planned them), turns push on for a
// device of the owner through the app's API (a subscription from the fake push service), and then,
// round after round, posts a group's cell temperature above the critical limit through the device
// API (a new critical alert), waits until the owner's e-mail and push of that alert arrived,
// posts a normal temperature (the alert clears) and waits until the delivery queue is empty, so
// that every alert starts from an idle queue, and a little longer (PHASE_SPAN_MS), so that alerts
// come at every point of the delivery worker's poll cycle.
//
// Times come from one clock (client, fakes, server and PostgreSQL share the machine): t0 just
// before the POST; arrival = the fake's receivedAt (also the moment this client saw it, which
// adds up to one poll of the fakes, POLL_MS); the server's side from the alert row, the outbox
// row and pg-boss's job row (created, started by a worker).
//
// Environment: BENCH_BASE_URL, BENCH_DATABASE_URL, BENCH_FAKES_URL (the fakes' HTTP side);
// optional BENCH_OUT (the JSON written), BENCH_ALERTS_ROUNDS (default 200), BENCH_SOURCE_DIR (the
// source measured, to read the delivery worker's poll interval from). Runs on its own too, against
// any such server whose database holds the demo:
//   BENCH_BASE_URL=… BENCH_DATABASE_URL=… BENCH_FAKES_URL=… node bench/alerts.mjs
import fs from 'node:fs';
import os from 'node:os';
import path from 'node:path';
import { fileURLToPath } from 'node:url';
import postgres from 'postgres';
import { expectStatus, quantile } from './lib.mjs';
import { copySession, demoBasis, deviceToken, signIn } from './seed.mjs';

const ROUNDS = Number(process.env.BENCH_ALERTS_ROUNDS || 200);
const WARMUP_ROUNDS = 3;
/** A critical over-temperature reading (above 60 °C, whatever the chemistry) and one well inside the limits. */
const HOT_C = 65;
const NORMAL_C = 25;
/** How long an e-mail or a push may take before it counts as never arrived. */
const ARRIVAL_TIMEOUT_MS = 10_000;
/** How often the fakes are asked (the "seen" times are late by up to this). */
const POLL_MS = 20;
/** How long to wait for the delivery queue to empty between rounds. */
const DRAIN_TIMEOUT_MS = 20_000;
/**
 * A pause before each alert, spread evenly over this span (golden-ratio steps): an alert comes at
 * any moment of the delivery worker's poll cycle, not right after the queue emptied, which would
 * put every alert at the same point of the cycle.
 */
const PHASE_SPAN_MS = 1000;
const phasePause = (round) => Math.floor((((round + WARMUP_ROUNDS) * 0.6180339887) % 1) * PHASE_SPAN_MS);

const sleep = (ms) => new Promise((resolve) => setTimeout(resolve, ms));
const log = (text) => console.log(`bench alerts: ${text}`);

/** The delivery worker's poll interval as the measured source states it (deliver.ts), or null. */
function pollSecondsOfSource(dir) {
	try {
		const text = fs.readFileSync(path.join(dir, 'src/lib/server/alerts/deliver.ts'), 'utf8');
		const m = /DELIVERY_POLL_SECONDS\s*=\s*([\d.]+)/.exec(text);
		return m ? Number(m[1]) : null;
	} catch {
		return null;
	}
}

/** p50, p95 and max of a list of milliseconds (nearest rank), with the count. */
export function summary(values) {
	const xs = values.filter(Number.isFinite).sort((a, b) => a - b);
	return { count: xs.length, p50: quantile(xs, 0.5), p95: quantile(xs, 0.95), max: xs.length ? xs[xs.length - 1] : Number.NaN };
}

async function getJson(url, what) {
	const response = await fetch(url);
	await expectStatus(response, [200], what);
	return response.json();
}

/** The owner's device: a subscription made by the fake push service, registered through the app. */
async function subscribeDevice(baseUrl, fakesUrl, cookie) {
	const key = await fetch(`${baseUrl}/api/push-subscriptions/key`, { headers: { cookie } });
	await expectStatus(key, [200], 'the VAPID public key');
	const { publicKey } = await key.json();
	const made = await fetch(`${fakesUrl}/push/subscriptions`, {
		method: 'POST',
		headers: { 'content-type': 'application/json' },
		body: JSON.stringify({ applicationServerKey: publicKey })
	});
	await expectStatus(made, [201], 'a subscription at the fake push service');
	const subscription = await made.json();
	const saved = await fetch(`${baseUrl}/api/push-subscriptions`, {
		method: 'POST',
		headers: { 'content-type': 'application/json', cookie, origin: baseUrl },
		body: JSON.stringify({ endpoint: subscription.endpoint, keys: subscription.keys, label: 'Bench phone' })
	});
	await expectStatus(saved, [201], 'turning push on for the bench phone');
	return subscription.endpoint;
}

/** Delivery jobs waiting for a worker or running (retries waiting for their backoff are not counted). */
async function jobsInQueue(sql) {
	const [{ n }] = await sql`select count(*)::int as n from pgboss.job
		where name = 'deliver-alert' and (state = 'active' or (state in ('created', 'retry') and start_after <= now()))`;
	return n;
}

async function waitForIdleQueue(sql) {
	const deadline = Date.now() + DRAIN_TIMEOUT_MS;
	for (;;) {
		const n = await jobsInQueue(sql);
		if (n === 0) return true;
		if (Date.now() > deadline) return false;
		await sleep(50);
	}
}

/** Polls the fakes until the owner's e-mail and push of `alertId` are there (or the timeout). */
async function waitForArrivals({ fakesUrl, ownerEmail, endpoint, alertId, t0 }) {
	const found = { mail: null, push: null };
	const deadline = t0 + ARRIVAL_TIMEOUT_MS;
	while ((!found.mail || !found.push) && Date.now() < deadline) {
		const [messages, pushes] = await Promise.all([
			found.mail ? null : getJson(`${fakesUrl}/messages?to=${encodeURIComponent(ownerEmail)}`, 'the fake mailbox'),
			found.push ? null : getJson(`${fakesUrl}/pushes?endpoint=${encodeURIComponent(endpoint)}`, 'the fake push service')
		]);
		const seenAt = Date.now();
		const mail = messages?.find((m) => m.text.includes(`/alerts/${alertId}`));
		if (mail) found.mail = { receivedMs: Date.parse(mail.receivedAt) - t0, seenMs: seenAt - t0 };
		const push = pushes?.find((p) => p.json?.alertId === alertId || String(p.json?.url ?? '').endsWith(`/alerts/${alertId}`));
		if (push) found.push = { receivedMs: Date.parse(push.receivedAt) - t0, seenMs: seenAt - t0 };
		if (!found.mail || !found.push) await sleep(POLL_MS);
	}
	return found;
}

/**
 * The server's side of one alert: when it was opened, and for each of the owner's deliveries when
 * its job was created and when a worker started it, and its place among the alert's jobs.
 */
async function serverSide(sql, alertId, ownerId, t0) {
	const [alert] = await sql`select opened_at from alerts where id = ${alertId}`;
	const jobs = await sql`select d.user_id, d.channel, d.status, j.created_on, j.started_on
		from alert_deliveries d join pgboss.job j on j.name = 'deliver-alert' and j.data->>'deliveryId' = d.id
		where d.alert_id = ${alertId} order by j.created_on, j.id`;
	const ms = (t) => (t ? new Date(t).getTime() - t0 : Number.NaN);
	const ofChannel = (channel) => {
		const i = jobs.findIndex((j) => j.user_id === ownerId && j.channel === channel);
		if (i < 0) return null;
		return { jobCreatedMs: ms(jobs[i].created_on), jobStartedMs: ms(jobs[i].started_on), position: i + 1, status: jobs[i].status };
	};
	return { openedMs: ms(alert?.opened_at), jobs: jobs.length, mail: ofChannel('email'), push: ofChannel('push') };
}

export async function alertDelivery({ sql, baseUrl, fakesUrl, rounds = ROUNDS, sourceDir }) {
	const { owner, pack, template } = await demoBasis(sql);
	const sessionId = await copySession(sql, template.id, pack.id, 'Bench: alerts');
	const [group] = await sql`select index from pack_groups where pack_id = ${pack.id} order by index limit 1`;
	const cookie = await signIn(sql, owner.id);
	const endpoint = await subscribeDevice(baseUrl, fakesUrl, cookie);
	const token = await deviceToken(baseUrl, owner.slug, sessionId, cookie, 'Bench alerts logger');
	const url = `${baseUrl}/api/w/${owner.slug}/sessions/${sessionId}/readings`;
	const headers = { 'content-type': 'application/json', authorization: `Bearer ${token}` };
	let lastTakenAt = 0;
	let serial = 0;
	const post = async (tempC) => {
		// Each reading newer than the last: the rules judge the newest reading of the group.
		lastTakenAt = Math.max(Date.now(), lastTakenAt + 1);
		const reading = { clientId: `bench-alert-${serial++}`, groupIndex: group.index, takenAt: new Date(lastTakenAt).toISOString(), tempC };
		const response = await fetch(url, { method: 'POST', headers, body: JSON.stringify({ readings: [reading] }) });
		await expectStatus(response, [201], `posting a reading of ${tempC} °C`);
		await response.arrayBuffer();
	};
	const activeCritical = async () =>
		sql`select id from alerts where session_id = ${sessionId} and kind = 'over-temperature' and severity = 'critical' and cleared_at is null`;

	// A first, normal reading: the session is no longer "no reading yet" for the alert clock.
	await post(NORMAL_C);
	await waitForIdleQueue(sql);

	const results = [];
	const missing = [];
	let unclearedRounds = 0;
	let busyQueueRounds = 0;
	for (let round = -WARMUP_ROUNDS; round < rounds; round++) {
		await fetch(`${fakesUrl}/messages`, { method: 'DELETE' });
		await fetch(`${fakesUrl}/pushes`, { method: 'DELETE' });
		await sleep(phasePause(round));
		const t0 = Date.now();
		await post(HOT_C);
		const postMs = Date.now() - t0;
		const active = await activeCritical();
		if (active.length !== 1) throw new Error(`round ${round}: ${active.length} active critical over-temperature alerts after a ${HOT_C} °C reading (expected 1)`);
		const alertId = active[0].id;
		const arrived = await waitForArrivals({ fakesUrl, ownerEmail: owner.email, endpoint, alertId, t0 });
		await post(NORMAL_C);
		if ((await activeCritical()).length) unclearedRounds++;
		if (!(await waitForIdleQueue(sql))) busyQueueRounds++;
		if (round < 0) continue;
		const server = await serverSide(sql, alertId, owner.id, t0);
		results.push({ alertId, postMs, ...server, mail: { ...server.mail, ...arrived.mail }, push: { ...server.push, ...arrived.push } });
		if (!arrived.mail || !arrived.push) missing.push({ alertId, mail: Boolean(arrived.mail), push: Boolean(arrived.push) });
		if ((round + 1) % 50 === 0) log(`${round + 1} of ${rounds} alerts`);
	}

	const pick = (f) => results.map(f);
	const median = (xs) => summary(xs).p50;
	const parts = (channel) => ({
		// POST sent → the delivery's job on the queue → a worker took it → the fake accepted it.
		queued: median(pick((r) => r[channel].jobCreatedMs)),
		waitForWorker: median(pick((r) => r[channel].jobStartedMs - r[channel].jobCreatedMs)),
		send: median(pick((r) => r[channel].receivedMs - r[channel].jobStartedMs)),
		position: median(pick((r) => r[channel].position))
	});
	return {
		rounds,
		warmupRounds: WARMUP_ROUNDS,
		pollSeconds: sourceDir ? pollSecondsOfSource(sourceDir) : null,
		fakesPollMs: POLL_MS,
		phaseSpanMs: PHASE_SPAN_MS,
		timeoutMs: ARRIVAL_TIMEOUT_MS,
		pack: { name: pack.name, series: pack.series },
		jobsPerAlert: median(pick((r) => r.jobs)),
		mail: summary(pick((r) => r.mail.receivedMs)),
		push: summary(pick((r) => r.push.receivedMs)),
		mailSeen: summary(pick((r) => r.mail.seenMs)),
		pushSeen: summary(pick((r) => r.push.seenMs)),
		post: summary(pick((r) => r.postMs)),
		opened: summary(pick((r) => r.openedMs)),
		mailParts: parts('mail'),
		pushParts: parts('push'),
		missing,
		unclearedRounds,
		busyQueueRounds,
		alerts: results
	};
}

const isMain = process.argv[1] && path.resolve(process.argv[1]) === fileURLToPath(import.meta.url);
if (isMain) {
	const need = (name) => {
		const value = process.env[name];
		if (!value) throw new Error(`${name} is not set: run this through scripts/bench.sh (npm run bench), or see the top of bench/alerts.mjs.`);
		return value;
	};
	const baseUrl = need('BENCH_BASE_URL');
	const fakesUrl = need('BENCH_FAKES_URL');
	const sql = postgres(need('BENCH_DATABASE_URL'), { max: 2, onnotice: () => {} });
	try {
		const loadAverageAtStart = os.loadavg();
		const startedAt = new Date().toISOString();
		log(`${ROUNDS} critical alerts, one at a time, after ${WARMUP_ROUNDS} for warm-up...`);
		const result = await alertDelivery({ sql, baseUrl, fakesUrl, sourceDir: process.env.BENCH_SOURCE_DIR || process.cwd() });
		const out = { startedAt, loadAverageAtStart, loadAverageAtEnd: os.loadavg(), ...result };
		const s = (x) => (Number.isFinite(x) ? `${Math.round(x)} ms` : '—');
		const line = (name, x) => log(`${name}: p50 ${s(x.p50)}, p95 ${s(x.p95)}, max ${s(x.max)} (${x.count} arrived)`);
		line('e-mail accepted by the fake SMTP', out.mail);
		line('push accepted by the fake push service', out.push);
		line('e-mail seen by this client', out.mailSeen);
		line('push seen by this client', out.pushSeen);
		log(`reading POST answered: p50 ${s(out.post.p50)}; delivery jobs per alert: ${out.jobsPerAlert}`);
		for (const [name, p] of [['e-mail', out.mailParts], ['push', out.pushParts]]) {
			log(`${name} (medians): job queued ${s(p.queued)} after t0, waited ${s(p.waitForWorker)} for a worker, sent in ${s(p.send)}; job ${p.position} of the alert's`);
		}
		if (out.missing.length) log(`never arrived within ${out.timeoutMs / 1000} s: ${out.missing.map((m) => `${m.alertId} (${[!m.mail && 'e-mail', !m.push && 'push'].filter(Boolean).join(', ')})`).join('; ')}`);
		else log('every e-mail and push arrived');
		if (out.unclearedRounds) log(`${out.unclearedRounds} rounds where the alert did not clear after the normal reading`);
		if (out.busyQueueRounds) log(`${out.busyQueueRounds} rounds where the queue was not empty after ${DRAIN_TIMEOUT_MS / 1000} s`);
		if (process.env.BENCH_OUT) fs.writeFileSync(process.env.BENCH_OUT, JSON.stringify(out, null, '\t') + '\n');
	} finally {
		await sql.end({ timeout: 5 });
	}
}

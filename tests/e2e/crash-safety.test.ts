import { expect, request as playwrightRequest, test } from '@playwright/test';
import postgres from 'postgres';
import { appServerUnavailable, issueDeviceToken, scratchDatabase, signUpWithRunningSession, startAppServer, type AppServer } from './app-server';
import { FAKES_URL, PASSWORD, uniqueEmail } from './helpers';

// Crash safety (issue 11, item 3): the built app with its jobs on (as `npm start` runs it) takes a
// logger's readings in batches with client ids; it is killed with SIGKILL in the middle of the
// stream and started again on the same database; the logger sends again everything that got no
// answer and some batches that did. Every acknowledged reading is stored exactly once, under the id
// it was acknowledged with, and every alert the readings raised reaches the fake SMTP server
// exactly once. CELLSITTER_STRESS=1 (npm run test:stress) sends 10,000 readings instead of 2,000.

const STRESS = process.env.CELLSITTER_STRESS === '1';
const TOTAL = STRESS ? 10_000 : 2_000;
const BATCH = 50;
const SENDERS = 4;
const SERIES = 4;
/** A group turns hot (65 °C, above the 60 °C critical limit) from this share of the stream on and stays hot. */
const HOT_FROM: Record<number, number> = { 2: 0.3, 3: 0.5, 4: 0.8 };
/** The server is killed once this share of the readings is acknowledged: group 3 turns hot about then. */
const KILL_AT = 0.5;

test.describe.configure({ mode: 'serial' });

type Reading = { clientId: string; groupIndex: number; takenAt: string; volts: number; tempC: number };
type Answer = { readings: { clientId: string; id: number; duplicate: boolean }[] };

/** The logger's whole stream: group 1…4 in turn, volts rising on every group alike, three groups turning hot. */
function stream(startMs: number, spanMs: number): Reading[] {
	return Array.from({ length: TOTAL }, (_, i) => {
		const groupIndex = (i % SERIES) + 1;
		const hot = HOT_FROM[groupIndex] !== undefined && i >= HOT_FROM[groupIndex] * TOTAL;
		return {
			clientId: `kill-${String(i).padStart(5, '0')}`,
			groupIndex,
			takenAt: new Date(startMs + Math.floor((i * spanMs) / TOTAL)).toISOString(),
			volts: Number((3.7 + (0.35 * i) / TOTAL).toFixed(4)),
			tempC: hot ? 65 : 25
		};
	});
}

test('a server killed mid-stream and started again keeps every acknowledged reading once and delivers every alert, again only where the kill cut a try short', async () => {
	test.setTimeout(STRESS ? 600_000 : 240_000);
	const why = appServerUnavailable();
	test.skip(why !== null, why ?? '');

	const database = await scratchDatabase('cellsitter_e2e_kill');
	const sql = postgres(database.url, { max: 2, onnotice: () => {} });
	const api = await playwrightRequest.newContext();
	let server: AppServer | undefined;
	try {
		server = await startAppServer({ databaseUrl: database.url, env: { CELLSITTER_JOBS: 'in-process' } });
		const { baseURL, port } = server;
		const email = uniqueEmail('kill');
		const run = await signUpWithRunningSession(api, baseURL, email, PASSWORD, SERIES);
		const token = await issueDeviceToken(api, baseURL, run);
		const readingsUrl = `${baseURL}/api/w/${run.slug}/sessions/${run.sessionId}/readings`;

		// Times after the step started, at most a few minutes ahead (the API takes up to 5 minutes ahead).
		const readings = stream(Date.now() + 1_000, 180_000);
		const batches: Reading[][] = [];
		for (let i = 0; i < readings.length; i += BATCH) batches.push(readings.slice(i, i + BATCH));
		const sentValues = new Map(readings.map((r) => [r.clientId, r]));

		/** clientId → the id the server acknowledged it with. */
		const acked = new Map<string, number>();
		const ackedBatches: number[] = [];
		const post = async (batch: Reading[]): Promise<Answer | null> => {
			try {
				const response = await fetch(readingsUrl, {
					method: 'POST',
					headers: { authorization: `Bearer ${token}`, 'content-type': 'application/json' },
					body: JSON.stringify({ readings: batch }),
					signal: AbortSignal.timeout(30_000)
				});
				if (response.status !== 200 && response.status !== 201) {
					throw new Error(`readings answered ${response.status}: ${await response.text()}`);
				}
				return (await response.json()) as Answer;
			} catch (e) {
				// A connection the kill cut (or refused while the server is down): no answer.
				if (e instanceof Error && e.message.startsWith('readings answered')) throw e;
				return null;
			}
		};
		const record = (batch: Reading[], answer: Answer) => {
			expect(answer.readings.map((r) => r.clientId)).toEqual(batch.map((r) => r.clientId));
			for (const r of answer.readings) {
				const before = acked.get(r.clientId);
				// Sent again: the same id as the first acknowledgement, never a second row.
				if (before !== undefined) expect(r.id, r.clientId).toBe(before);
				acked.set(r.clientId, r.id);
			}
		};

		// First life: SENDERS loggers side by side; killed once half the readings are acknowledged.
		const unanswered: number[] = [];
		let next = 0;
		let killed = false;
		const first = server;
		const sender = async () => {
			while (next < batches.length && !killed) {
				const n = next++;
				const answer = await post(batches[n]);
				if (!answer) {
					unanswered.push(n);
					continue;
				}
				record(batches[n], answer);
				ackedBatches.push(n);
				if (!killed && acked.size >= KILL_AT * TOTAL) {
					killed = true;
					// In flight: the other senders' batches, and the judgement and deliveries of the readings so far.
					await first.kill();
				}
			}
		};
		await Promise.all(Array.from({ length: SENDERS }, sender));
		expect(killed).toBe(true);
		const ackedBeforeKill = acked.size;
		const inFlight = [...unanswered];
		const notSent = Array.from({ length: batches.length - next }, (_, i) => next + i);

		// Second life on the same database and port.
		server = await startAppServer({ databaseUrl: database.url, port, env: { CELLSITTER_JOBS: 'in-process' } });

		// Sent again: every batch without an answer, every fifth acknowledged one, and a batch that
		// mixes acknowledged readings with readings not sent yet. Then the rest of the stream.
		const again = ackedBatches.filter((_, i) => i % 5 === 0);
		const mixedFrom = notSent.shift();
		const queue: Reading[][] = [...inFlight, ...again].map((n) => batches[n]);
		if (mixedFrom !== undefined) queue.push([...batches[again[0]].slice(0, 10), ...batches[mixedFrom]]);
		queue.push(...notSent.map((n) => batches[n]));
		let taken = 0;
		const resender = async () => {
			while (taken < queue.length) {
				const batch = queue[taken++];
				const answer = await post(batch);
				expect(answer, 'the restarted server answers').not.toBeNull();
				record(batch, answer!);
			}
		};
		await Promise.all(Array.from({ length: SENDERS }, resender));
		expect(acked.size).toBe(TOTAL);
		console.log(
			`crash-safety: ${TOTAL} readings, ${ackedBeforeKill} acknowledged before the kill, ${inFlight.length} batches cut, ${again.length} acknowledged batches sent again`
		);

		// Every acknowledged reading exactly once, under its acknowledged id, with the values sent.
		const rows = await sql<{ client_id: string; id: string; n: number; volts: number; temp_c: number; group_index: number }[]>`
			select r.client_id, min(r.id)::text as id, count(*)::int as n, min(r.volts) as volts, min(r.temp_c) as temp_c, min(g.index) as group_index
			from readings r join pack_groups g on g.id = r.group_id
			where r.session_id = ${run.sessionId} group by r.client_id`;
		expect(rows.length).toBe(TOTAL);
		const [{ total }] = await sql<{ total: number }[]>`select count(*)::int as total from readings where session_id = ${run.sessionId}`;
		expect(total).toBe(TOTAL);
		const wrong = rows.filter((r) => {
			const sent = sentValues.get(r.client_id)!;
			return r.n !== 1 || Number(r.id) !== acked.get(r.client_id) || r.volts !== sent.volts || r.temp_c !== sent.tempC || r.group_index !== sent.groupIndex;
		});
		expect(wrong.slice(0, 5)).toEqual([]);

		// Each hot group raised its critical over-temperature alert once (it stays hot to the end).
		const alertRows = await sql<{ id: string; kind: string; severity: string; group_index: number | null }[]>`
			select a.id, a.kind, a.severity, g.index as group_index
			from alerts a left join pack_groups g on g.id = a.group_id
			where a.session_id = ${run.sessionId} order by a.opened_at`;
		for (const group of Object.keys(HOT_FROM).map(Number)) {
			const hot = alertRows.filter((a) => a.kind === 'over-temperature' && a.severity === 'critical' && a.group_index === group);
			expect(hot, `critical over-temperature alerts of group ${group}`).toHaveLength(1);
		}
		expect(alertRows.filter((a) => a.kind === 'over-temperature' && a.group_index === 1)).toEqual([]);

		// Their deliveries: the planner is on watch and takes e-mail (push: no device, so "gone").
		// Wait until none is pending: one the kill left half done goes again after the job expires.
		const alertIds = alertRows.map((a) => a.id);
		const deliveriesStarted = Date.now();
		type Delivery = { id: string; alert_id: string; channel: string; reason: string; status: string; ok_attempts: number; cut_attempts: number };
		let deliveries: Delivery[] = [];
		await expect
			.poll(
				async () => {
					deliveries = await sql<Delivery[]>`
						select d.id, d.alert_id, d.channel, d.reason, d.status,
							(select count(*)::int from jsonb_array_elements(d.log) e where (e->>'ok')::boolean) as ok_attempts,
							(select count(*)::int from jsonb_array_elements(d.log) e where (e->>'cut')::boolean) as cut_attempts
						from alert_deliveries d where d.alert_id = any(${alertIds})`;
					return deliveries.filter((d) => d.status === 'pending').length;
				},
				{ timeout: 120_000, intervals: [250, 500, 1000] }
			)
			.toBe(0);
		console.log(`crash-safety: ${alertRows.length} alerts, deliveries settled ${Date.now() - deliveriesStarted} ms after the last reading`);
		for (const id of alertIds) {
			const mail = deliveries.filter((d) => d.alert_id === id && d.channel === 'email');
			expect(mail.map((d) => [d.reason, d.status, d.ok_attempts]), `e-mail deliveries of alert ${id}`).toEqual([['on-watch', 'sent', 1]]);
		}

		// The fake SMTP server got one message per alert (each links to its alert). A second copy only
		// where the kill cut a try short after the mail server had taken the message: that try is
		// logged as cut off, and the copy is the same message (one Message-ID), which mail programs
		// show once. Exactly once is not possible across a kill between the mail server's "accepted"
		// and the row's update; dropping the retry instead could lose a critical alert.
		const cutsOf = new Map(deliveries.filter((d) => d.channel === 'email').map((d) => [d.alert_id, d.cut_attempts]));
		const idOf = new Map(deliveries.filter((d) => d.channel === 'email').map((d) => [d.alert_id, d.id]));
		let copies: [string, { n: number; ids: string[] }][] = [];
		await expect
			.poll(async () => {
				const messages = (await (await fetch(`${FAKES_URL}/messages?to=${encodeURIComponent(email)}`)).json()) as { subject: string; text: string; messageId: string }[];
				const perAlert = new Map<string, { n: number; ids: string[] }>();
				for (const m of messages) {
					const id = /\/alerts\/([a-z2-7]{24})/.exec(m.text)?.[1] ?? `not an alert: ${m.subject}`;
					const seen = perAlert.get(id) ?? { n: 0, ids: [] };
					perAlert.set(id, { n: seen.n + 1, ids: [...new Set([...seen.ids, m.messageId])] });
				}
				copies = [...perAlert].sort();
				return copies.map(([id]) => id);
			})
			.toEqual([...alertIds].sort());
		for (const [id, { n, ids }] of copies) {
			expect(n, `copies of alert ${id}'s e-mail`).toBeGreaterThanOrEqual(1);
			expect(n - 1, `copies of alert ${id}'s e-mail beyond the first, against its cut-off tries`).toBeLessThanOrEqual(cutsOf.get(id)!);
			expect(ids, `Message-IDs of alert ${id}'s e-mail`).toEqual([expect.stringMatching(new RegExp(`^<${idOf.get(id)}\\.alert@`))]);
		}
		const cuts = [...cutsOf.values()].reduce((a, b) => a + b, 0);
		console.log(`crash-safety: ${cuts} e-mail tries cut off by the kill, ${copies.reduce((a, [, c]) => a + c.n - 1, 0)} copies sent again`);
	} finally {
		await server?.stop();
		await api.dispose();
		await sql.end();
		await database.drop();
	}
});

// The HTTP and database measurements of `npm run bench` (docs/performance.md), each beside its
// reference in the same run: the device API beside a raw insert, the readings endpoint beside a
// bare route, the 100,000-reading chart beside the 1,000-reading one.
import autocannon from 'autocannon';
import { benchVolts, expectStatus, msSince, pool, quantile } from './lib.mjs';

const INGEST = { batch: 500, batches: 60, parallel: 4, rounds: 2 };
// When the machine cannot keep 500/s (both runs queue), the pair is measured again at a rate it
// can keep, so the run still says what the readings endpoint adds over the bare route.
const LATENCY = { rate: 500, connections: 20, seconds: 15, warmupSeconds: 3, lowerRate: 50 };
const SERIES = { warmup: 3, runs: 25 };

function readingRows(groups, prefix, batchNo, size) {
	const now = Date.now() - 120_000;
	return Array.from({ length: size }, (_, k) => {
		const g = groups[k % groups.length];
		return {
			clientId: `${prefix}-${batchNo}-${k}`,
			groupIndex: g.index,
			takenAt: new Date(now - (size - k) * 1000).toISOString(),
			volts: benchVolts(g.index, k),
			amps: 2,
			tempC: 25
		};
	});
}

/**
 * Rows per second through POST …/readings with the device token, and through postgres.js
 * multi-row INSERTs of the same rows into the same table, in alternating rounds.
 */
export async function ingest(sql, baseUrl, seeded) {
	const { slug, sessions, token, groups, pack } = seeded;
	const url = `${baseUrl}/api/w/${slug}/sessions/${sessions.ingest}/readings`;
	const [device] = await sql`select id from device_tokens where session_id = ${sessions.ingest}`;
	const groupId = new Map(groups.map((g) => [g.index, g.id]));
	const headers = { 'content-type': 'application/json', authorization: `Bearer ${token}` };

	const viaApi = async (round, warm = false) => {
		const batches = warm ? 4 : INGEST.batches;
		const start = process.hrtime.bigint();
		await pool(batches, INGEST.parallel, async (b) => {
			const body = JSON.stringify({ readings: readingRows(groups, `api${warm ? 'w' : ''}${round}`, b, INGEST.batch) });
			const r = await fetch(url, { method: 'POST', headers, body });
			await expectStatus(r, [201], 'device API batch');
			const answer = await r.json();
			if (answer.stored !== INGEST.batch) throw new Error(`device API stored ${answer.stored} of ${INGEST.batch}`);
		});
		return (batches * INGEST.batch) / (msSince(start) / 1000);
	};
	const viaSql = async (round, warm = false) => {
		const batches = warm ? 4 : INGEST.batches;
		const start = process.hrtime.bigint();
		await pool(batches, INGEST.parallel, async (b) => {
			const rows = readingRows(groups, `raw${warm ? 'w' : ''}${round}`, b, INGEST.batch).map((r) => ({
				session_id: sessions.ingest,
				pack_id: pack.id,
				group_id: groupId.get(r.groupIndex),
				taken_at: new Date(r.takenAt),
				volts: r.volts,
				amps: r.amps,
				temp_c: r.tempC,
				source: 'device',
				device_token_id: device.id,
				client_id: r.clientId
			}));
			await sql`insert into readings ${sql(rows)}`;
		});
		return (batches * INGEST.batch) / (msSince(start) / 1000);
	};

	await viaApi(0, true);
	await viaSql(0, true);
	const api = [];
	const raw = [];
	for (let round = 1; round <= INGEST.rounds; round++) {
		api.push(await viaApi(round));
		raw.push(await viaSql(round));
	}
	const mean = (xs) => xs.reduce((s, x) => s + x, 0) / xs.length;
	return { ...INGEST, apiRowsPerSecond: mean(api), rawRowsPerSecond: mean(raw), apiRounds: api, rawRounds: raw, ratio: mean(api) / mean(raw) };
}

function cannon(options) {
	return new Promise((resolve, reject) => {
		autocannon(options, (error, result) => (error ? reject(error) : resolve(result)));
	});
}

/** p50/p99 of one-reading POSTs at a fixed 500 requests/s, beside the bare route at the same rate. */
export async function latency(baseUrl, seeded) {
	const { slug, sessions, token } = seeded;
	const takenAt = new Date(Date.now() - 60_000).toISOString();
	// [<id>] becomes a fresh id in every request (autocannon idReplacement): each reading is new.
	const body = JSON.stringify({ readings: [{ clientId: 'lat-[<id>]', groupIndex: 1, takenAt, volts: 3.95, amps: 2, tempC: 25 }] });
	const headers = { 'content-type': 'application/json', authorization: `Bearer ${token}` };
	const run = async (url, seconds, rate = LATENCY.rate) => {
		const r = await cannon({ url, method: 'POST', headers, body, idReplacement: true, connections: LATENCY.connections, overallRate: rate, duration: seconds });
		return {
			requests: r.requests.total,
			requestsPerSecond: r.requests.average,
			p50: r.latency.p50,
			p90: r.latency.p90,
			p99: r.latency.p99,
			max: r.latency.max,
			non2xx: r.non2xx,
			errors: r.errors,
			timeouts: r.timeouts
		};
	};
	const readingsUrl = `${baseUrl}/api/w/${slug}/sessions/${sessions.ingest}/readings`;
	const bareUrl = `${baseUrl}/api/bench/bare`;
	await run(bareUrl, LATENCY.warmupSeconds);
	await run(readingsUrl, LATENCY.warmupSeconds);
	const bare = await run(bareUrl, LATENCY.seconds);
	const readings = await run(readingsUrl, LATENCY.seconds);
	const result = { ...LATENCY, bare, readings, ratioP99: readings.p99 / bare.p99, ratioP50: readings.p50 / bare.p50 };
	if (Math.min(bare.requestsPerSecond, readings.requestsPerSecond) < 0.9 * LATENCY.rate) {
		const lowerBare = await run(bareUrl, LATENCY.seconds, LATENCY.lowerRate);
		const lowerReadings = await run(readingsUrl, LATENCY.seconds, LATENCY.lowerRate);
		result.lower = { rate: LATENCY.lowerRate, bare: lowerBare, readings: lowerReadings, ratioP99: lowerReadings.p99 / lowerBare.p99, ratioP50: lowerReadings.p50 / lowerBare.p50 };
	}
	return result;
}

/** GET …/series (the live view's chart data, default points) of the 100,000- and 1,000-reading sessions. */
export async function series(baseUrl, seeded) {
	const { slug, sessions, cookie } = seeded;
	const time = async (sessionId) => {
		const start = process.hrtime.bigint();
		const r = await fetch(`${baseUrl}/api/w/${slug}/sessions/${sessionId}/series`, { headers: { cookie } });
		await expectStatus(r, [200], 'series');
		const text = await r.text();
		return { ms: msSince(start), bytes: text.length, lines: JSON.parse(text).volts?.length };
	};
	// What a live viewer pays: the chart data fetched again right after a new reading arrived
	// (posted through the readings API, whose NOTIFY marks the kept chart data stale).
	let posted = 0;
	const afterReading = async (sessionId) => {
		const r = await fetch(`${baseUrl}/api/w/${slug}/sessions/${sessionId}/readings`, {
			method: 'POST',
			headers: { cookie, 'content-type': 'application/json' },
			body: JSON.stringify({ readings: [{ clientId: `bench-live-${process.pid}-${posted++}`, groupIndex: 1, takenAt: new Date().toISOString(), volts: 3.9, amps: 1 }] })
		});
		await expectStatus(r, [200, 201], 'posting a reading before the series');
		await new Promise((resolve) => setTimeout(resolve, 50));
		return time(sessionId);
	};
	for (let i = 0; i < SERIES.warmup; i++) {
		await time(sessions.small);
		await time(sessions.large);
	}
	const small = [];
	const large = [];
	const smallFresh = [];
	const largeFresh = [];
	for (let i = 0; i < SERIES.runs; i++) {
		small.push(await time(sessions.small));
		large.push(await time(sessions.large));
		smallFresh.push(await afterReading(sessions.small));
		largeFresh.push(await afterReading(sessions.large));
	}
	const summary = (xs) => {
		const ms = xs.map((x) => x.ms).sort((a, b) => a - b);
		return { median: quantile(ms, 0.5), p90: quantile(ms, 0.9), min: ms[0], bytes: xs[0].bytes, lines: xs[0].lines };
	};
	const shape = { small: summary(small), large: summary(large), smallFresh: summary(smallFresh), largeFresh: summary(largeFresh) };
	return {
		...SERIES,
		...shape,
		ratio: shape.large.median / shape.small.median,
		ratioFresh: shape.largeFresh.median / shape.smallFresh.median
	};
}

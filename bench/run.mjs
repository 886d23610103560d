#!/usr/bin/env node
// `npm run bench`, the part against the built server (scripts/bench.sh starts it and the database):
// seeds the data, measures ingest, latency and the live view's chart data, sizes the run screen's
// JavaScript, and writes everything as JSON for bench/report.mjs.
//
// Environment (set by scripts/bench.sh): BENCH_BASE_URL, BENCH_DATABASE_URL, BENCH_BUILD_DIR,
// BENCH_VITE_MANIFEST, BENCH_OUT (the JSON written); BENCH_ALERTS_JSON, the figures of
// bench/alerts.mjs (measured before, against the server with its jobs on), kept with the rest.
import fs from 'node:fs';
import os from 'node:os';
import postgres from 'postgres';
import { MAIN_PAGES, runScreenJs } from './bundle.mjs';
import { ingest, latency, series } from './measure.mjs';
import { seed } from './seed.mjs';

const need = (name) => {
	const value = process.env[name];
	if (!value) throw new Error(`${name} is not set: run this through scripts/bench.sh (npm run bench).`);
	return value;
};
const baseUrl = need('BENCH_BASE_URL');
const out = need('BENCH_OUT');
const sql = postgres(need('BENCH_DATABASE_URL'), { max: 4, onnotice: () => {} });

const log = (text) => console.log(`bench: ${text}`);
const results = { startedAt: new Date().toISOString(), source: process.env.BENCH_SOURCE ?? '', loadAverageAtStart: os.loadavg() };
try {
	const [{ version }] = await sql`select version()`;
	results.postgres = version;
	log('seeding (demo workshop, three sessions, 101,000 readings, a device token)...');
	const seeded = await seed(sql, baseUrl);
	results.seed = { slug: seeded.slug, pack: seeded.pack, groups: seeded.groups.length };

	log('JavaScript of the run screen...');
	results.bundle = await runScreenJs(need('BENCH_BUILD_DIR'), need('BENCH_VITE_MANIFEST'));
	results.pages = [];
	for (const page of MAIN_PAGES) {
		const js = await runScreenJs(need('BENCH_BUILD_DIR'), need('BENCH_VITE_MANIFEST'), page.route);
		results.pages.push({ name: page.name, route: page.route, atLoad: js.atLoad, withLazy: js.withLazy });
	}
	log('ingest: device API beside a raw multi-row INSERT...');
	results.ingest = await ingest(sql, baseUrl, seeded);
	log('latency: one-reading POST at a fixed rate beside the bare route...');
	results.latency = await latency(baseUrl, seeded);
	log('live view: series of 100,000 beside 1,000 readings...');
	results.series = await series(baseUrl, seeded);
	results.loadAverageAtEnd = os.loadavg();
	const alertsFile = process.env.BENCH_ALERTS_JSON;
	if (alertsFile && fs.existsSync(alertsFile)) results.alerts = JSON.parse(fs.readFileSync(alertsFile, 'utf8'));
	fs.writeFileSync(out, JSON.stringify(results, null, '\t') + '\n');
} finally {
	await sql.end({ timeout: 5 });
}

#!/usr/bin/env node
// Prints the figures of `npm run bench` and writes docs/performance.md from them.
//
//   node bench/report.mjs <http results.json> <vitest bench.json> <engine notes.jsonl> <https smoke.json> <docs/performance.md>
//
// Targets are compared and reported, never asserted: a missed target is written down with its figure.
import fs from 'node:fs';
import os from 'node:os';

const [httpFile, engineFile, notesFile, httpsFile, docFile] = process.argv.slice(2);
const readJson = (file) => (file && fs.existsSync(file) ? JSON.parse(fs.readFileSync(file, 'utf8')) : undefined);
const http = readJson(httpFile);
const engine = readJson(engineFile);
const https = readJson(httpsFile);
const notes = Object.fromEntries(
	(notesFile && fs.existsSync(notesFile) ? fs.readFileSync(notesFile, 'utf8').trim().split('\n').filter(Boolean) : [])
		.map((line) => JSON.parse(line))
		.map((n) => [n.kind, n])
);

const fmt = (x, digits = 1) => (Number.isFinite(x) ? x.toLocaleString('en-GB', { maximumFractionDigits: digits, minimumFractionDigits: digits }) : '—');
const whole = (x) => (Number.isFinite(x) ? Math.round(x).toLocaleString('en-GB') : '—');
const verdict = (ok) => (ok === undefined ? 'not measured' : ok ? 'met' : '**missed**');

const benchLines = (engine?.files ?? []).flatMap((f) => f.groups.flatMap((g) => g.benchmarks));
const benchByName = (start) => benchLines.find((b) => b.name.startsWith(start));
const replan = benchByName('planChannels: re-plan 400 groups');
const match40k = benchByName('matchCells: 40,000 cells');

const cpus = os.cpus();
const machine = [
	['CPU', `${cpus.length} × ${cpus[0]?.model ?? 'unknown'}${cpus[0]?.speed ? ` (${cpus[0].speed} MHz)` : ''}`],
	['Memory', `${fmt(os.totalmem() / 2 ** 30)} GiB`],
	['System', `${os.type()} ${os.release()} (${os.arch()})`],
	['Node.js', process.version],
	['PostgreSQL', http?.postgres?.split(',')[0] ?? '—'],
	['Load average (1 min) at start / end of the HTTP part', http ? `${fmt(http.loadAverageAtStart[0], 2)} / ${fmt(http.loadAverageAtEnd?.[0], 2)}` : '—'],
	['Code measured', http?.source || '—'],
	['Date', (http?.startedAt ?? new Date().toISOString()).slice(0, 16).replace('T', ' ') + ' UTC']
];

const rows = [];
if (http?.ingest) {
	const i = http.ingest;
	rows.push(['Readings ingest, device API vs raw INSERT', `${whole(i.apiRowsPerSecond)} rows/s`, `${whole(i.rawRowsPerSecond)} rows/s`, `${fmt(i.ratio, 2)}`, '≥ 0.5', verdict(i.ratio >= 0.5)]);
}
if (http?.latency) {
	const l = http.latency;
	// At a fixed rate the comparison holds only if both runs kept that rate; otherwise both queued.
	const kept = (x) => x.requestsPerSecond >= 0.9 * l.rate;
	const lower = l.lower ? `; at ${l.lower.rate}/s the p99 ratio is ${fmt(l.lower.ratioP99, 2)}×` : '';
	const result = !kept(l.readings) || !kept(l.bare) ? `**missed** (${l.rate}/s not reached${lower})` : verdict(l.ratioP99 <= 3 && l.readings.non2xx === 0);
	rows.push([`One-reading POST at ${l.rate}/s, p50 / p99`, `${fmt(l.readings.p50)} / ${fmt(l.readings.p99)} ms`, `${fmt(l.bare.p50)} / ${fmt(l.bare.p99)} ms (bare route)`, `p99 ${fmt(l.ratioP99, 2)}×`, 'p99 ≤ 3×', result]);
}
if (http?.series) {
	const s = http.series;
	if (s.largeFresh) {
		rows.push(['Live view chart data after a new reading, 100,000 vs 1,000 readings (median)', `${fmt(s.largeFresh.median)} ms`, `${fmt(s.smallFresh.median)} ms`, `${fmt(s.ratioFresh, 2)}×`, '≤ 1.5×', verdict(s.ratioFresh <= 1.5)]);
	}
	rows.push(['Live view chart data, kept (no new reading), 100,000 vs 1,000 readings (median)', `${fmt(s.large.median)} ms`, `${fmt(s.small.median)} ms`, `${fmt(s.ratio, 2)}×`, '≤ 1.5×', verdict(s.ratio <= 1.5)]);
}
if (http?.bundle) {
	const b = http.bundle;
	rows.push(['JavaScript of the run screen, gzip (what it loads; the charts\' drawings only when asked)', `${fmt(b.atLoad.gzip / 1000)} kB`, `${fmt(b.withLazy.gzip / 1000)} kB with the drawings`, '—', '≤ 120 kB', verdict(b.atLoad.gzip / 1000 <= 120)]);
}
const alerts = http?.alerts;
if (alerts?.mail && alerts?.push) {
	const secs = (ms) => `${fmt(ms / 1000, 2)} s`;
	const arrivedAll = alerts.missing.length === 0;
	rows.push([
		`Alert delivery, reading POST to e-mail / push accepted, p95 (${alerts.rounds} alerts)`,
		`${secs(alerts.mail.p95)} / ${secs(alerts.push.p95)}`,
		`p50 ${secs(alerts.mail.p50)} / ${secs(alerts.push.p50)}${arrivedAll ? '' : `; ${alerts.missing.length} never arrived`}`,
		'—',
		'p95 ≤ 1 s',
		verdict(alerts.mail.p95 <= 1000 && alerts.push.p95 <= 1000 && arrivedAll)
	]);
} else {
	rows.push(['Alert delivery, reading POST to e-mail / push accepted, p95', '—', '—', '—', 'p95 ≤ 1 s', verdict(undefined)]);
}
if (replan) rows.push(['Re-plan 400 groups on 16 channels, hands-on windows (mean)', `${fmt(replan.mean, 2)} ms`, `min ${fmt(replan.min, 2)}, p75 ${fmt(replan.p75, 2)} ms`, '—', '≤ 4 ms', verdict(replan.mean <= 4)]);
if (match40k) rows.push(['Match 40,000 cells into 400S100P (mean)', `${whole(match40k.mean)} ms`, `min ${whole(match40k.min)} ms`, '—', '≤ 1 s', verdict(match40k.mean <= 1000)]);

const table = (head, body) => [`| ${head.join(' | ')} |`, `|${head.map(() => '---').join('|')}|`, ...body.map((r) => `| ${r.join(' | ')} |`)].join('\n');
const missed = rows.filter((r) => r[5].startsWith('**missed**'));

const sections = [];
sections.push(`# Performance

\`npm run bench\` (scripts/bench.sh) builds a copy of the working tree (\`CELLSITTER_BENCH_REF=<commit>\`:
that commit) in a temporary folder, starts a throwaway
database and the built server on a free port, seeds data through the demo workshop and the app's own
API, measures, stops what it started and rewrites this page. For alert delivery it first runs
the same build with its background jobs and the local fakes of the mail and push services. Each figure stands beside a reference
measured in the same run on the same machine, because absolute figures move with the machine and
its load. Nothing here is a test: targets are compared, not asserted, and a missed target is
written down with its figure.`);
sections.push(`## Machine of this run\n\n${table(['', ''], machine)}

The client (autocannon, fetch), the server (one Node.js process) and PostgreSQL all share these
cores. The database is the throwaway test cluster of \`scripts/pg.sh --test\` (fsync off), so
inserts are not bound by the disk.${
	http && Math.max(http.loadAverageAtStart[0], http.loadAverageAtEnd?.[0] ?? 0) > cpus.length
		? `

**This run shared the machine:** the load average (${fmt(http.loadAverageAtStart[0], 1)} at the start of the HTTP part, ${fmt(http.loadAverageAtEnd?.[0], 1)} at its end) was above its ${cpus.length} cores, so other programs (builds, type checks, browser tests) held the CPU for much of it. Wall times and request rates are inflated by that; the ratios, measured side by side, less so. Even the CPU time per call rises on a busy virtual machine (shared caches, time taken by the host), so the engine figures of such a run are upper bounds of its cost.`
		: ''
}`);
sections.push(`## Against the targets\n\n${table(['measure', 'figure', 'reference (same run)', 'ratio', 'target', ''], rows)}${
	missed.length ? `\n\n**Missed in this run:** ${missed.map((r) => r[0]).join('; ')}. See below for what the figure means.` : '\n\nEvery target was met in this run.'
}`);

if (http?.ingest) {
	const i = http.ingest;
	sections.push(`## Readings ingest

${whole(i.batches * i.batch)} readings per round, in batches of ${i.batch}, ${i.parallel} requests at a time, ${i.rounds} rounds after a warm-up,
API and raw alternating, all into the \`readings\` table of one running session on the ${http.seed.pack.series}-group
demo pack:

- **device API**: \`POST /api/w/…/sessions/…/readings\` with \`Authorization: Bearer <device token>\`:
  JSON parse, zod checks of every row, token lookup, the session's status under a key-share lock,
  one \`insert … on conflict do nothing\` over \`unnest()\` with the live-view notify, then, before the
  answer, the alert rules on the session's newest readings, one judgement shared by the posts that
  arrive together (one statement tells whether anything changes; \`src/lib/server/alerts/judge.ts\`). Rounds: ${i.apiRounds.map(whole).join(', ')} rows/s.
- **raw**: postgres.js multi-row \`insert into readings \${sql(rows)}\` of the same rows (4 connections).
  Rounds: ${i.rawRounds.map(whole).join(', ')} rows/s.

Ratio ${fmt(i.ratio, 2)} (target ≥ 0.5).`);
}
if (http?.latency) {
	const l = http.latency;
	const line = (name, x) => `| ${name} | ${whole(x.requests)} | ${fmt(x.requestsPerSecond, 0)} | ${fmt(x.p50)} | ${fmt(x.p90)} | ${fmt(x.p99)} | ${fmt(x.max)} | ${x.non2xx} | ${x.errors + x.timeouts} |`;
	sections.push(`## One-reading POST latency

autocannon at a fixed ${l.rate} requests/s (\`overallRate\`), ${l.connections} connections, ${l.seconds} s after ${l.warmupSeconds} s of warm-up
each. Every request carries one new reading (a fresh clientId) with the device token. The bare route
\`POST /api/bench/bare\` (only with \`CELLSITTER_BENCH=1\`) runs the same hooks and reads the same JSON
body, with no database and no data.

| route | requests | req/s | p50 ms | p90 ms | p99 ms | max ms | non-2xx | errors |
|---|---|---|---|---|---|---|---|---|
${line('readings (device token)', l.readings)}
${line('bare route', l.bare)}

p99 ratio ${fmt(l.ratioP99, 2)}× (target ≤ 3×); p50 ratio ${fmt(l.ratioP50, 2)}×.${
		l.readings.requestsPerSecond < 0.9 * l.rate || l.bare.requestsPerSecond < 0.9 * l.rate
			? ` The server did not keep up with ${l.rate} requests/s in this run (see req/s): requests queued, so the latencies above are queueing time and the ratio says little.`
			: ''
	}${
		l.lower
			? `

The same pair again at ${l.lower.rate} requests/s:

| route | requests | req/s | p50 ms | p90 ms | p99 ms | max ms | non-2xx | errors |
|---|---|---|---|---|---|---|---|---|
${line('readings (device token)', l.lower.readings)}
${line('bare route', l.lower.bare)}

p99 ratio ${fmt(l.lower.ratioP99, 2)}×, p50 ratio ${fmt(l.lower.ratioP50, 2)}× at ${l.lower.rate}/s${l.lower.readings.requestsPerSecond < 0.9 * l.lower.rate ? ` (that rate was not kept either)` : ''}.`
			: ''
	}`);
}
if (http?.series) {
	const s = http.series;
	sections.push(`## Live view chart data

\`GET /api/w/…/sessions/…/series\` (default points per line) as the owner, ${s.runs} times each after ${s.warmup} warm-ups,
alternating between a session with 100,000 readings and one with 1,000 (one a minute per group, on the
${http.seed.groups} groups of the demo pack).

| session | median ms | p90 ms | min ms | answer bytes | voltage lines |
|---|---|---|---|---|---|
| 100,000 readings, kept | ${fmt(s.large.median)} | ${fmt(s.large.p90)} | ${fmt(s.large.min)} | ${whole(s.large.bytes)} | ${s.large.lines ?? '—'} |
| 1,000 readings, kept | ${fmt(s.small.median)} | ${fmt(s.small.p90)} | ${fmt(s.small.min)} | ${whole(s.small.bytes)} | ${s.small.lines ?? '—'} |${
		s.largeFresh
			? `
| 100,000 readings, right after a new reading | ${fmt(s.largeFresh.median)} | ${fmt(s.largeFresh.p90)} | ${fmt(s.largeFresh.min)} | ${whole(s.largeFresh.bytes)} | ${s.largeFresh.lines ?? '—'} |
| 1,000 readings, right after a new reading | ${fmt(s.smallFresh.median)} | ${fmt(s.smallFresh.p90)} | ${fmt(s.smallFresh.min)} | ${whole(s.smallFresh.bytes)} | ${s.smallFresh.lines ?? '—'} |`
			: ''
	}

"Kept" is a fetch with nothing new (the server's kept buckets answer); "right after a new reading"
posts one reading through the readings API first, as a live viewer's refetch follows each reading,
so the kept buckets are brought up to date from the new rows only. Ratios of medians: kept
${fmt(s.ratio, 2)}×${s.ratioFresh !== undefined ? `, after a new reading ${fmt(s.ratioFresh, 2)}×` : ''} (target ≤ 1.5×). A kept
answer is kept as JSON text, so it costs the session lookup whatever the session's size. After a
new reading only the lines of the reading's group (and the spread and room temperature) are
downsampled and written again; the rest of the 100,000-reading answer is larger (every line has
its full 600 points, the default; the short session's lines have fewer) and is pieced together
from the kept text of each line.`);
}
if (http?.bundle) {
	const b = http.bundle;
	sections.push(`## JavaScript shipped to the run screen

Route \`${b.route}\` (layouts and page: nodes ${b.nodes.join(', ')}). From the build's server manifest and
Vite's client manifest: the client entry and every static import of those nodes (**at load**), plus
what they import dynamically (**with lazy chunks**); each file gzipped with zlib at level 9.

- at load: ${b.atLoad.files} files, ${fmt(b.atLoad.raw / 1000)} kB raw, **${fmt(b.atLoad.gzip / 1000)} kB gzip** (target ≤ 120 kB)
- with lazy chunks: ${b.withLazy.files} files, ${fmt(b.withLazy.raw / 1000)} kB raw, **${fmt(b.withLazy.gzip / 1000)} kB gzip**

Largest files (gzip): ${b.largest.map((f) => `\`${f.file}\` ${fmt(f.gzip / 1000)} kB${f.lazy ? ' (lazy)' : ''}`).join(', ')}.

The run screen loads what is at load. The lazy chunk is loaded only when someone taps "Draw the
charts" (remembered on that device): the charts' figures in words (latest, highest and lowest
group, spread, temperatures, the running step) are always there without it, so a phone at the
bench never downloads the drawings unless asked. The target is compared with what the screen loads.

What is in it: the lazy chunk is the charts — chart.js with only the line chart's parts registered
(about 51 kB gzip of it is chart.js itself, its floor for a line chart on a time axis), our own
zoned date adapter instead of chartjs-adapter-date-fns (which brought date-fns's whole parser and
locale, about 12 kB gzip) and our own legend instead of chart.js's. Loaded at the start are the
framework runtimes (Svelte, SvelteKit, TanStack Query: about 45 kB gzip together), the icons and
the run screen's own code, with the alert screens (tile states, alarm, red strip) since alerts came in.
Together with chart.js those runtimes already take most of the 120 kB target.`);
}
if (http?.pages?.length) {
	sections.push(`## JavaScript per main page

The same count for each main page (client entry, layouts and page with their static imports; then
what they load on demand), gzip level 9. Pages load what is at load; the lazy part is loaded only
when asked for (the charts' drawings on the run screen and the pack history).

| page | at load, kB gzip | with lazy chunks, kB gzip | files at load |
|---|---|---|---|
${http.pages.map((p) => `| ${p.name} | ${fmt(p.atLoad.gzip / 1000)} | ${fmt(p.withLazy.gzip / 1000)} | ${p.atLoad.files} |`).join('\n')}`);
}
if (alerts?.mail && alerts?.push) {
	const a = alerts;
	const ms = (x) => (Number.isFinite(x) ? `${whole(x)} ms` : '—');
	const line = (name, x) => `| ${name} | ${ms(x.p50)} | ${ms(x.p95)} | ${ms(x.max)} | ${x.count} of ${a.rounds} |`;
	const poll = a.pollSeconds ?? 0.5;
	// The largest of the three parts of the slower channel's median time is what dominates.
	const slow = a.push.p50 >= a.mail.p50 ? { name: 'push', p: a.pushParts } : { name: 'e-mail', p: a.mailParts };
	const parts = [
		['waiting for a delivery worker to take the job', slow.p.waitForWorker],
		['sending (from the worker taking the job to the fake accepting it)', slow.p.send],
		['storing and judging the reading and queueing the jobs', slow.p.queued]
	].sort((x, y) => y[1] - x[1]);
	const missing = a.missing.length
		? `**Never arrived within ${a.timeoutMs / 1000} s:** ${a.missing.map((m) => `alert ${m.alertId} (${[!m.mail && 'e-mail', !m.push && 'push'].filter(Boolean).join(', ')})`).join('; ')}.`
		: `Every e-mail and push arrived (timeout ${a.timeoutMs / 1000} s each).`;
	const oddities = [
		a.unclearedRounds ? `In ${a.unclearedRounds} rounds the alert had not cleared after the normal reading.` : '',
		a.busyQueueRounds ? `In ${a.busyQueueRounds} rounds the queue was still busy when the next alert was raised.` : ''
	].filter(Boolean);
	// Jobs of one alert taken one poll apart (pg-boss 10's worker fetches one job, then waits out
	// the interval) or together: the median wait per place in the queue says which.
	const places = a.pushParts.position - a.mailParts.position;
	const perPlace = places ? (a.pushParts.waitForWorker - a.mailParts.waitForWorker) / places : Number.NaN;
	const queueing = !Number.isFinite(perPlace)
		? ''
		: perPlace >= 0.8 * poll * 1000
			? `Each job waited about ${ms(perPlace)} longer per job ahead of it in the queue: the worker takes one job per poll (pg-boss's default batch of one) and after each job waits out the rest of the interval, so the k-th job of an alert waits for the part of an interval left before the next poll plus about k − 1 intervals.`
			: `A job waited about ${ms(perPlace)} longer per job ahead of it in the queue: the jobs of one alert are taken nearly together, so the wait is mostly the part of an interval left before the next poll.`;
	sections.push(`## Alert delivery

${a.rounds} critical alerts, one at a time (after ${a.warmupRounds} for warm-up), on a copy of a demo session of the
${a.pack.name} (the session's watchers as the demo planned it). Each round posts one reading of
group 1's cell temperature at 65 °C through the device API (\`POST …/readings\` with a device token),
which raises a new critical over-temperature alert (above 60 °C, whatever the chemistry); the owner
has push turned on for one device (a subscription from the fake push service, registered through
\`POST /api/push-subscriptions\`). Measured from just before the POST to the moment the fake SMTP
server accepted the owner's e-mail of that alert, and the fake push service accepted and decrypted
its push (their \`receivedAt\`; client, server and fakes share one clock). A reading of 25 °C then
clears the alert, and the next round waits until the delivery queue is empty. The server is the
same build with its background jobs in-process (the default) and the local fakes
(\`tests/fakes/server.js\`) on free ports; this part runs alone, before the HTTP part (load average
${fmt(a.loadAverageAtStart?.[0], 2)} at its start, ${fmt(a.loadAverageAtEnd?.[0], 2)} at its end).

| from the POST to | p50 | p95 | max | arrived |
|---|---|---|---|---|
${line('e-mail accepted by the fake SMTP server', a.mail)}
${line('push accepted by the fake push service', a.push)}
${line('e-mail seen by the bench (it asks the fakes every ' + a.fakesPollMs + ' ms)', a.mailSeen)}
${line('push seen by the bench', a.pushSeen)}

${missing}${oddities.length ? ' ' + oddities.join(' ') : ''} Target: p95 ≤ 1 s for both.

Where the time goes (medians, from pg-boss's job rows): the reading's POST was answered after
${ms(a.post.p50)}, the delivery jobs were on the queue ${ms(a.mailParts.queued)} after the POST was sent; the e-mail's job
then waited ${ms(a.mailParts.waitForWorker)} for a worker and took ${ms(a.mailParts.send)} to send, the push's job waited
${ms(a.pushParts.waitForWorker)} and took ${ms(a.pushParts.send)}.

What dominates is ${parts[0][0]}: ${ms(parts[0][1])} of the ${slow.name}'s median ${ms(slow.name === 'push' ? a.push.p50 : a.mail.p50)}. The
delivery worker asks pg-boss for jobs every ${poll} s (\`DELIVERY_POLL_SECONDS\` in
\`src/lib/server/alerts/deliver.ts\`; pg-boss's least polling interval). Each alert here made
${a.jobsPerAlert} delivery jobs (an e-mail to each of the session's watchers and a push to each device, queued
in the watchers' name order); the owner's e-mail was job ${a.mailParts.position} and the push job ${a.pushParts.position}. ${queueing}`);
}
if (benchLines.length) {
	const engineRows = benchLines.map((b) => [b.name, fmt(b.min, 2), fmt(b.p75, 2), fmt(b.mean, 2), fmt(b.p99, 2), String(b.sampleCount)]);
	const gaps = [];
	if (notes.replan) {
		const n = notes.replan;
		gaps.push(`- Re-plan: the plan ends after ${fmt(n.totalHours)} h; the channels' lower bound (longest step, or all step hours ÷ ${n.channels} channels, whichever is more; it ignores when people are there) is ${fmt(n.lowerBoundHours)} h: a gap of ${fmt(n.totalHours - n.lowerBoundHours)} h (${fmt((n.totalHours / n.lowerBoundHours - 1) * 100)} %), most of it waiting for the hands-on hours to swap leads. Process CPU time ${fmt(n.cpuMsPerCall, 2)} ms per re-plan (wall ${fmt(n.wallMsPerCall, 2)} ms, ${n.calls ?? 50} calls in a row).`);
	}
	if (notes.match40k) {
		const n = notes.match40k;
		gaps.push(`- Matching 40,000 cells: spread between groups ${fmt(n.spreadMah, 0)} mAh; lower bound ${fmt(n.wholeMahBoundMah, 0)} mAh (capacities in whole mAh, every cell used, and the total not divisible by ${n.series}: no assignment does better); gap **${fmt(n.spreadMah - n.wholeMahBoundMah, 0)} mAh**. The engine's own bound is ${fmt(n.engineLowerBoundMah, 0)} mAh (it proves optimality only for small sets). Process CPU time ${whole(n.cpuMsPerCall)} ms per matching (wall ${whole(n.wallMsPerCall)} ms).`);
	}
	sections.push(`## Engine

vitest bench (\`src/lib/engine/*.bench.ts\`), wall time per call in ms:

${table(['benchmark', 'min', 'p75', 'mean', 'p99', 'samples'], engineRows)}

${gaps.join('\n')}`);
}
if (https) {
	sections.push(`## HTTPS check

The same build served through \`scripts/https.js\` (docs/deploy.md) on 127.0.0.1, \`/\` fetched with the
generated authority as the only trusted certificate: HTTP ${https.status}${https.ok ? ' (trusted, answered)' : ` — ${https.error ?? 'failed'}`}.`);
}
sections.push(`## Reading these figures

- One run on a shared machine: a ratio is meaningful within the run; an absolute figure mostly
  says how busy the machine was. A load average above the number of cores means other programs
  took CPU time during the run.
- The engine targets are set so that a phone about four times slower than this machine still
  re-plans within one 16 ms frame.
- Run it again with \`npm run bench\`; it rewrites this page.`);

const doc = sections.join('\n\n') + '\n';
if (docFile) fs.writeFileSync(docFile, doc);
console.log('\n' + table(['measure', 'figure', 'reference (same run)', 'ratio', 'target', ''], rows));
for (const line of sections.find((s) => s.startsWith('## Engine'))?.split('\n').filter((l) => l.startsWith('- ')) ?? []) console.log(line);
if (missed.length) console.log(`\nMissed in this run: ${missed.map((r) => r[0]).join('; ')}`);

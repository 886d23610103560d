/**
 * Hostile input, generated: fast-check builds request bodies for the JSON API and the main form
 * actions (wrong types, huge numbers, NaN/Infinity as text, long strings at and past the limits,
 * unicode with NUL and control characters, missing and extra fields, deep nesting, lists where
 * objects belong, wrong content types, empty and broken bodies), malformed and oversized CSV files
 * (cells, logger) and attachments (wrong type, too large). Each is sent to its handler in-process,
 * with a request event built as the browser's or a device's request would reach it.
 *
 * The property, for every generated request: the answer is a 4xx with a message in plain words
 * (a non-empty text, no stack trace) — never a 5xx, never an error that is not an HTTP answer —
 * and a refused request leaves the database as it was: the row count and a checksum of every table
 * are the same before and after. A body that happens to be valid may be accepted (2xx, or a
 * form's 303 onwards); its changes become the new "before".
 *
 * The tests run in a database of their own (made from the migrations in beforeAll, dropped in
 * afterAll) on the test server, so that no other test file — nor another run against the same
 * server — changes a table between the two checksums.
 *
 * Size: 1,000 requests with a fixed seed (printed; CELLSITTER_FUZZ_SEED=<n> replays another),
 * 10,000 with a fresh seed when CELLSITTER_STRESS=1.
 */
import { randomBytes } from 'node:crypto';
import { mkdir, readdir, rm } from 'node:fs/promises';
import path from 'node:path';
import { stringify } from 'devalue';
import { drizzle } from 'drizzle-orm/postgres-js';
import { migrate } from 'drizzle-orm/postgres-js/migrator';
import fc from 'fast-check';
import postgres from 'postgres';
import { afterAll, beforeAll, describe, expect, it, vi } from 'vitest';

// serverEnv() caches on first use: the data folder (attachments) must be set before anything asks.
const dataDir = vi.hoisted(() => {
	const dir = `${process.env.TMPDIR ?? '/tmp'}/cellsitter-fuzz-${process.pid}-${Date.now()}`;
	process.env.CELLSITTER_DATA_DIR = dir;
	return dir;
});

import { formValuesOf } from '$lib/chemistry-form';
import { chemistries } from '$lib/engine';
import { ATTACHMENT_MAX_BYTES } from '$lib/attachments';
import { LOGGER_CSV_MAX_BYTES } from '$lib/logger-csv';
import type { Member } from '$lib/server/auth/permissions';
import { closeDb, db, sqlClient } from '$lib/server/db';
import { alerts, chargers, packs } from '$lib/server/db/schema';
import { rereadServerEnv } from '$lib/server/env';
import { UNREADABLE_FORM } from '$lib/server/forms';
import { stopBoss } from '$lib/server/jobs/boss';
import { newId } from '$lib/server/ids';
import { saveLoggerMapping } from '$lib/server/sessions/logger';
import { issueDeviceToken } from '$lib/server/sessions/tokens';
import { eq } from 'drizzle-orm';
import * as packsApi from '../../src/routes/api/w/[workshop=slug]/packs/+server';
import * as packApi from '../../src/routes/api/w/[workshop=slug]/packs/[packId=id]/+server';
import * as cellsApi from '../../src/routes/api/w/[workshop=slug]/packs/[packId=id]/cells/+server';
import * as matchingApi from '../../src/routes/api/w/[workshop=slug]/packs/[packId=id]/matching/+server';
import * as chargersApi from '../../src/routes/api/w/[workshop=slug]/chargers/+server';
import * as sessionsApi from '../../src/routes/api/w/[workshop=slug]/sessions/+server';
import * as sessionApi from '../../src/routes/api/w/[workshop=slug]/sessions/[sessionId=id]/+server';
import * as statusApi from '../../src/routes/api/w/[workshop=slug]/sessions/[sessionId=id]/status/+server';
import * as stepApi from '../../src/routes/api/w/[workshop=slug]/sessions/[sessionId=id]/steps/[stepId=id]/+server';
import * as watchApi from '../../src/routes/api/w/[workshop=slug]/sessions/[sessionId=id]/watch/+server';
import * as readingsApi from '../../src/routes/api/w/[workshop=slug]/sessions/[sessionId=id]/readings/+server';
import * as readingApi from '../../src/routes/api/w/[workshop=slug]/sessions/[sessionId=id]/readings/[readingId=num]/+server';
import * as tokensApi from '../../src/routes/api/w/[workshop=slug]/sessions/[sessionId=id]/tokens/+server';
import * as watchersApi from '../../src/routes/api/w/[workshop=slug]/sessions/[sessionId=id]/watchers/+server';
import * as ackApi from '../../src/routes/api/w/[workshop=slug]/alerts/[alertId=id]/ack/+server';
import * as alertSettingsApi from '../../src/routes/api/w/[workshop=slug]/alert-settings/+server';
import * as pushApi from '../../src/routes/api/push-subscriptions/+server';
import * as attachmentsRoute from '../../src/routes/(app)/w/[workshop=slug]/packs/[packId=id]/attachments/+server';
import * as cellsPage from '../../src/routes/(app)/w/[workshop=slug]/packs/[packId=id]/cells/+page.server';
import * as newPackPage from '../../src/routes/(app)/w/[workshop=slug]/packs/new/+page.server';
import * as editPackPage from '../../src/routes/(app)/w/[workshop=slug]/packs/[packId=id]/edit/+page.server';
import * as newSpecPage from '../../src/routes/(app)/w/[workshop=slug]/cell-specs/new/+page.server';
import * as editSpecPage from '../../src/routes/(app)/w/[workshop=slug]/cell-specs/[specId=id]/+page.server';
import * as newChargerPage from '../../src/routes/(app)/w/[workshop=slug]/chargers/new/+page.server';
import * as chargerPage from '../../src/routes/(app)/w/[workshop=slug]/chargers/[chargerId=id]/+page.server';
import * as newChemistryPage from '../../src/routes/(app)/w/[workshop=slug]/chemistries/new/+page.server';
import * as newSessionPage from '../../src/routes/(app)/w/[workshop=slug]/sessions/new/+page.server';
import * as planPage from '../../src/routes/(app)/w/[workshop=slug]/sessions/[sessionId=id]/plan/+page.server';
import * as uploadPage from '../../src/routes/(app)/w/[workshop=slug]/sessions/[sessionId=id]/upload/+page.server';
import * as devicesPage from '../../src/routes/(app)/w/[workshop=slug]/sessions/[sessionId=id]/devices/+page.server';
import * as alertPage from '../../src/routes/(app)/w/[workshop=slug]/alerts/[alertId=id]/+page.server';
import * as workshopPage from '../../src/routes/(app)/w/[workshop=slug]/workshop/+page.server';
import * as membersPage from '../../src/routes/(app)/w/[workshop=slug]/workshop/members/+page.server';
import * as accountPage from '../../src/routes/(app)/account/+page.server';
import { joinAs } from './helpers';
import { addSession, sessionFixture } from './readings-fixture';

const STRESS = process.env.CELLSITTER_STRESS === '1';
const RUNS = STRESS ? 10_000 : 1_000;
const SEED = Number(process.env.CELLSITTER_FUZZ_SEED ?? (STRESS ? Date.now() % 2 ** 31 : 20261203));

// ---------------------------------------------------------------------------------------------
// The database of its own, and what "unchanged" means
// ---------------------------------------------------------------------------------------------

const sharedUrl = process.env.DATABASE_URL!;
const fuzzDb = `cellsitter_fuzz_${process.pid}_${randomBytes(3).toString('hex')}`;
const adminUrl = () => {
	const u = new URL(sharedUrl);
	u.pathname = '/postgres';
	return u.toString();
};

/**
 * Left out of the checksum, because a request may change them without storing anything it sent:
 * - rate_limits: every counted request writes its counter (refused or not);
 * - auth_sessions: sign-in sessions and their last-seen time (hooks renew them on any request);
 * - device_tokens.last_used_at: a device post with a known token notes when the token was used;
 * - pg-boss's own schema (`pgboss`) and drizzle's migration log: only the `public` schema is summed.
 */
const SKIP_TABLES = new Set(['rate_limits', 'auth_sessions']);
const SKIP_COLUMNS: Record<string, string[]> = { device_tokens: ['last_used_at'] };

let tables: string[] = [];

/** Row count and md5 of the rows (as JSON, in a fixed order) of every table of the app. */
async function snapshot(): Promise<Record<string, string>> {
	const parts = tables.map((t) => {
		const skip = SKIP_COLUMNS[t] ?? [];
		const row = skip.length ? `(to_jsonb(x) - array[${skip.map((c) => `'${c}'`).join(',')}]::text[])::text` : 'to_jsonb(x)::text';
		return `select '${t}' as t, count(*)::text || ':' || md5(coalesce(string_agg(r, '|' order by r), '')) as sum from (select ${row} as r from "${t}" x) s`;
	});
	const rows = (await sqlClient().unsafe(parts.join(' union all '))) as unknown as { t: string; sum: string }[];
	return Object.fromEntries(rows.map((r) => [r.t, r.sum]));
}

async function storedFiles(): Promise<string[]> {
	return (await readdir(path.join(dataDir, 'attachments')).catch(() => [] as string[])).sort();
}

// ---------------------------------------------------------------------------------------------
// Request events and answers
// ---------------------------------------------------------------------------------------------

type Send = { body?: BodyInit; headers?: Record<string, string> };

function event(who: Member | null, pathName: string, params: Record<string, string>, method: string, send: Send) {
	const url = new URL(`http://127.0.0.1${pathName}`);
	return {
		locals: { user: who?.user ?? null, session: null },
		params,
		url,
		route: { id: pathName },
		// Not loopback: limits counted per address must never reach the browser tests' 127.0.0.1.
		getClientAddress: () => '192.0.2.34',
		setHeaders: () => {},
		cookies: { get: () => undefined, getAll: () => [], set: () => {}, delete: () => {}, serialize: () => '' },
		request: new Request(url, { method, body: send.body, headers: send.headers })
	} as never;
}

type Outcome = { status: number; texts: string[]; raw: string };

// Keys whose strings are not messages: superforms echoes the posted data, its shape and ids.
const NOT_MESSAGES = new Set(['data', 'constraints', 'shape', 'id', 'posted', 'valid', 'field', 'path', 'clientId']);

function textsIn(v: unknown, depth = 0): string[] {
	if (depth > 8 || v === null || v === undefined) return [];
	if (typeof v === 'string') return v.trim() ? [v] : [];
	if (Array.isArray(v)) return v.flatMap((x) => textsIn(x, depth + 1));
	if (typeof v === 'object')
		return Object.entries(v as Record<string, unknown>).flatMap(([k, x]) => (NOT_MESSAGES.has(k) ? [] : textsIn(x, depth + 1)));
	return [];
}

async function fromResponse(r: Response): Promise<Outcome> {
	const raw = await r.text();
	let body: unknown = null;
	try {
		body = JSON.parse(raw);
	} catch {
		// not JSON: judged below (a refusal must be JSON with a message)
	}
	const message = (body as { message?: unknown } | null)?.message;
	return { status: r.status, texts: typeof message === 'string' && message.trim() ? [message] : [], raw };
}

/** The answer of an endpoint or a form action, however it came (returned, thrown HttpError or redirect). */
async function answer(run: () => unknown): Promise<Outcome> {
	try {
		const result = await run();
		if (result instanceof Response) return fromResponse(result);
		const r = result as { status?: number; data?: unknown } | undefined;
		const isFailure = r && typeof r === 'object' && typeof r.status === 'number' && 'data' in r;
		if (isFailure) {
			const data = r.data as Record<string, unknown>;
			// A superforms failure: its messages are the form's errors and message.
			const form = Object.values(data ?? {}).find((x) => x && typeof x === 'object' && 'errors' in (x as object) && 'valid' in (x as object)) as
				| { errors: unknown; message?: unknown }
				| undefined;
			const texts = form ? [...textsIn(form.errors), ...textsIn(form.message)] : textsIn(data);
			return { status: r.status!, texts, raw: JSON.stringify(data) };
		}
		return { status: 200, texts: [], raw: '' };
	} catch (e) {
		const err = e as { status?: number; body?: { message?: unknown }; location?: string };
		if (err && typeof err.location === 'string' && typeof err.status === 'number') return { status: err.status, texts: [], raw: err.location };
		if (err && typeof err.status === 'number' && err.body && typeof err.body === 'object') {
			const m = err.body.message;
			return { status: err.status, texts: typeof m === 'string' && m.trim() ? [m] : [], raw: JSON.stringify(err.body) };
		}
		throw e;
	}
}

const STACK = /\n\s+at\s|\bat [\w.<>]+ \(|node_modules|\.[cm]?[jt]s:\d+:\d+/;

// ---------------------------------------------------------------------------------------------
// Generators
// ---------------------------------------------------------------------------------------------

const controlChars = ['\u0000', '\u0001', '\u0007', '\b', '\t', '\n', '\r', '\u000b', '\u001b', '\u001f', '\u007f', '\u0085', '\u00a0'];
const oddChars = ['\u2028', '\u2029', '\u202e', '\u200b', '\ufeff', '\ud800', '\udfff', '\uffff', '😀', '🔋', 'é', 'ß', 'Ω', '٣', '３', '"', "'", '\\', '<', '>', '&', '%', ';', ','];

/** Text: any code unit, control characters, odd unicode, and long runs at and past the limits. */
const hostileText: fc.Arbitrary<string> = fc.oneof(
	{ weight: 3, arbitrary: fc.string({ unit: 'binary', maxLength: 30 }) },
	{ weight: 3, arbitrary: fc.string({ unit: fc.constantFrom(...controlChars, ...oddChars, 'a', '1', '.', ' '), maxLength: 20 }) },
	{ weight: 2, arbitrary: fc.tuple(fc.constantFrom('Pack', 'C1', 'Left', 'owner@example.test', '3.6'), fc.constantFrom(...controlChars)).map(([a, c]) => `${a}${c}`) },
	{
		weight: 2,
		arbitrary: fc
			.tuple(fc.constantFrom(40, 41, 60, 61, 80, 81, 100, 101, 200, 201, 500, 501, 1000, 1001, 2000, 2001, 5000, 20_000, 100_001), fc.constantFrom('x', 'é', '😀', '\u0000', ' '))
			.map(([n, c]) => c.repeat(n))
	}
);

const numberishText = fc.constantFrom(
	'NaN', 'nan', 'Infinity', '-Infinity', '+Infinity', 'inf', '1e999', '-1e999', '1e308', '5e-324', '0x1F', '0b11', '1_000', ' 4.2 ', '4,2', '4.2.1',
	'', ' ', '-0', '00012', '9007199254740993', '٣٫٦', '３.６', 'null', 'undefined', 'true', '[]', '{}', '3.6V', '1e-7', '-1'
);

const hugeNumber = fc.constantFrom(
	0, -0, -1, 1, 0.5, 1e308, -1e308, Number.MAX_VALUE, Number.MIN_VALUE, Number.MAX_SAFE_INTEGER + 2, -Number.MAX_SAFE_INTEGER - 2, 2 ** 31, 2 ** 31 - 1, -(2 ** 31) - 1, 2 ** 63, 1e21, 3.6e-300
);

function nested(depth: number, list: boolean): unknown {
	let v: unknown = 'deep';
	for (let i = 0; i < depth; i++) v = list ? [v] : { a: v };
	return v;
}

const leaf: fc.Arbitrary<unknown> = fc.oneof(
	fc.constantFrom(null, true, false, '__proto__', 'constructor', 'toString'),
	hugeNumber,
	fc.integer(),
	fc.double(), // NaN and ±Infinity reach JSON as null, a form as "NaN"/"Infinity"
	numberishText,
	hostileText
);

/** Any value a field might be sent: wrong types, odd numbers, hostile text, lists, objects, deep nesting. */
const weird: fc.Arbitrary<unknown> = fc.oneof(
	{ weight: 8, arbitrary: leaf },
	{ weight: 1, arbitrary: fc.array(leaf, { maxLength: 4 }) },
	{ weight: 1, arbitrary: fc.dictionary(fc.string({ maxLength: 6 }), leaf, { maxKeys: 3 }) },
	{ weight: 1, arbitrary: fc.tuple(fc.constantFrom(10, 100, 1000, 3000), fc.boolean()).map(([d, l]) => nested(d, l)) }
);

type Path = (string | number)[];

/** Every path inside a body (pre-order), so a mutation can reach nested fields too. */
function pathsOf(v: unknown, at: Path = []): Path[] {
	const out: Path[] = at.length ? [at] : [];
	if (at.length >= 6) return out; // not into the deep nests a mutation put there
	if (Array.isArray(v)) v.forEach((x, i) => out.push(...pathsOf(x, [...at, i])));
	else if (v && typeof v === 'object') for (const [k, x] of Object.entries(v)) out.push(...pathsOf(x, [...at, k]));
	return out;
}

function setAt(root: unknown, p: Path, value: unknown, drop: boolean) {
	let node = root as Record<string | number, unknown>;
	for (const k of p.slice(0, -1)) node = node[k] as Record<string | number, unknown>;
	const last = p[p.length - 1];
	if (drop) {
		if (Array.isArray(node)) node.splice(last as number, 1);
		else delete node[last];
	} else node[last] = value;
}

/**
 * A body built from a valid one: one to three fields (at any depth) replaced by weird values,
 * some dropped, some extra keys added — or the whole body replaced by a weird value.
 */
function mutated(base: () => unknown): fc.Arbitrary<unknown> {
	return fc.oneof(
		{
			weight: 9,
			arbitrary: fc
				.record({
					sets: fc.array(fc.tuple(fc.nat(), weird), { minLength: 1, maxLength: 3 }),
					drops: fc.array(fc.nat(), { maxLength: 2 }),
					extra: fc.dictionary(fc.constantFrom('id', 'workshopId', 'createdBy', '__proto__', 'x', 'role', 'status'), weird, { maxKeys: 2 })
				})
				.map(({ sets, drops, extra }) => {
					const body = structuredClone(base());
					const paths = pathsOf(body);
					for (const [i, value] of sets) {
						const all = pathsOf(body);
						if (all.length) setAt(body, all[i % all.length], value, false);
					}
					for (const i of drops) {
						const all = pathsOf(body);
						if (all.length && paths.length) setAt(body, all[i % all.length], undefined, true);
					}
					if (body && typeof body === 'object' && !Array.isArray(body)) {
						for (const [k, v] of Object.entries(extra)) Object.defineProperty(body, k, { value: v, enumerable: true, writable: true, configurable: true });
					}
					return body;
				})
		},
		{ weight: 1, arbitrary: weird }
	);
}

/** How a JSON body is sent: mostly as JSON, but also as text, a form, nothing, or bytes that are not JSON. */
const jsonSend = (body: fc.Arbitrary<unknown>): fc.Arbitrary<Send> =>
	fc.oneof(
		{ weight: 12, arbitrary: body.map((b) => ({ body: JSON.stringify(b) ?? '', headers: { 'content-type': 'application/json' } })) },
		{ weight: 1, arbitrary: body.map((b) => ({ body: JSON.stringify(b) ?? '', headers: { 'content-type': 'APPLICATION/JSON; charset=utf-8' } })) },
		{ weight: 1, arbitrary: body.map((b) => ({ body: JSON.stringify(b) ?? '', headers: { 'content-type': 'text/plain;charset=UTF-8' } })) },
		{ weight: 1, arbitrary: body.map((b) => ({ body: new URLSearchParams({ json: JSON.stringify(b) ?? '' }).toString(), headers: { 'content-type': 'application/x-www-form-urlencoded' } })) },
		{ weight: 1, arbitrary: body.map((b) => formOf({ body: JSON.stringify(b) ?? '' })) },
		{ weight: 1, arbitrary: fc.constant<Send>({ headers: { 'content-type': 'application/json' } }) },
		{ weight: 1, arbitrary: fc.constant<Send>({}) },
		{
			weight: 2,
			arbitrary: fc
				.oneof(hostileText, fc.constantFrom('{', '{"readings":[', '[1,2', 'NaN', '{"a":1}{"b":2}', '\ufeff{}', '{"a":"\\ud800"}', "{'a':1}", '{"a":01}', 'null'))
				.map((text) => ({ body: text, headers: { 'content-type': 'application/json' } }))
		}
	);

function formOf(fields: Record<string, string | Blob>): Send {
	const form = new FormData();
	for (const [k, v] of Object.entries(fields)) form.append(k, v);
	// A counterexample names the fields it posted (FormData itself prints as [object FormData]).
	const shown = Object.fromEntries(
		Object.entries(fields).map(([k, v]) => [k, typeof v === 'string' ? (v.length > 400 ? `${v.slice(0, 400)}… (${v.length} chars)` : v) : `file of ${v.size} bytes`])
	);
	return { body: form, [fc.toStringMethod]: () => `form ${fc.stringify(shown)}` } as Send;
}

const asField = (v: unknown): string => (typeof v === 'string' ? v : (JSON.stringify(v) ?? String(v)));

/** A form body built from valid fields: fields replaced, dropped, added; sent in several encodings. */
function formSend(base: () => Record<string, string>): fc.Arbitrary<Send> {
	const fields = fc
		.record({
			sets: fc.array(fc.tuple(fc.nat(), weird), { minLength: 1, maxLength: 3 }),
			drops: fc.array(fc.nat(), { maxLength: 2 }),
			extra: fc.dictionary(fc.string({ maxLength: 8 }), weird.map(asField), { maxKeys: 2 })
		})
		.map(({ sets, drops, extra }) => {
			const f: Record<string, string> = { ...base() };
			const keys = Object.keys(f);
			for (const [i, v] of sets) if (keys.length) f[keys[i % keys.length]] = asField(v);
			for (const i of drops) if (keys.length) delete f[keys[i % keys.length]];
			return { ...extra, ...f };
		});
	return fc.oneof(
		{ weight: 12, arbitrary: fields.map(formOf) },
		{ weight: 2, arbitrary: fields.map((f) => ({ body: new URLSearchParams(f).toString(), headers: { 'content-type': 'application/x-www-form-urlencoded' } })) },
		// SvelteKit itself answers 415 to JSON or no content type before an action runs; they are sent
		// anyway, so an action holds whatever reaches it. text/plain does reach it (an HTML form may
		// send it), and so do an empty body and a broken multipart one.
		{ weight: 1, arbitrary: fields.map((f) => ({ body: JSON.stringify(f), headers: { 'content-type': 'application/json' } })) },
		{ weight: 1, arbitrary: fc.constant<Send>({}) },
		{ weight: 1, arbitrary: fields.map((f) => ({ body: JSON.stringify(f), headers: { 'content-type': 'text/plain' } })) },
		{ weight: 1, arbitrary: fields.map((f) => ({ body: new URLSearchParams(f).toString().replaceAll('&', '\r\n'), headers: { 'content-type': 'text/plain;charset=UTF-8' } })) },
		{ weight: 1, arbitrary: fc.constant<Send>({ body: '', headers: { 'content-type': 'application/x-www-form-urlencoded' } }) },
		{
			weight: 1,
			arbitrary: fc.constantFrom(
				'--zzz\r\nContent-Disposition: form-data; name="rows"\r\n\r\n[1',
				'--zzz--',
				'garbage without a boundary',
				'--zzz\r\nContent-Disposition: form-data\r\n\r\nno name\r\n--zzz--'
			).map((body) => ({ body, headers: { 'content-type': 'multipart/form-data; boundary=zzz' } }))
		},
		{ weight: 1, arbitrary: fc.constant<Send>({ body: 'a=1', headers: { 'content-type': 'multipart/form-data' } }) }
	);
}

/** devalue's text of a value; one it refuses to encode (a `__proto__` key) goes as JSON, as a hand-made post could. */
function devalued(d: unknown): string {
	try {
		return stringify(d);
	} catch {
		return JSON.stringify(d) ?? '';
	}
}

/** A superforms form posted with dataType 'json': the data travels devalue-encoded in one field. */
function superJsonSend(base: () => unknown): fc.Arbitrary<Send> {
	return fc.oneof(
		{ weight: 10, arbitrary: mutated(base).map((d) => formOf({ __superform_json: devalued(d) })) },
		{ weight: 2, arbitrary: hostileText.map((t) => formOf({ __superform_json: t })) },
		{ weight: 1, arbitrary: fc.constantFrom('[{"a":1},', '[1]', '[]', '[-1]', '[{"name":1},"\\u0000"]').map((t) => formOf({ __superform_json: t })) },
		{ weight: 1, arbitrary: formSend(() => ({ name: 'x' })) }
	);
}

/** A CSV file's text: a valid head and rows, then broken quoting, wrong columns, hostile cells, huge files. */
function csvText(head: string, row: string, maxBytes: number): fc.Arbitrary<string> {
	const line = fc.oneof(
		{ weight: 4, arbitrary: fc.constant(row) },
		{
			weight: 3,
			arbitrary: fc
				.tuple(fc.array(fc.oneof(leaf.map(asField), numberishText), { minLength: 1, maxLength: 6 }), fc.constantFrom(',', ';', '\t'))
				.map(([cs, d]) => cs.join(d))
		},
		{ weight: 1, arbitrary: fc.constantFrom('"unterminated,3.6', 'a""b,"c', ',,,,,,,,', '\u0000,\u0000', '"C1\n2",3.6', '=cmd|\' /C calc\'!A0,3.6') }
	);
	return fc.oneof(
		{ weight: 8, arbitrary: fc.tuple(fc.boolean(), fc.array(line, { maxLength: 12 }), fc.constantFrom('\n', '\r\n', '\r')).map(([withHead, ls, nl]) => [...(withHead ? [head] : []), ...ls].join(nl)) },
		{ weight: 1, arbitrary: hostileText },
		// Past the size limit: one byte more than allowed, in rows that would otherwise be read.
		{ weight: 1, arbitrary: fc.constant(null).map(() => `${head}\n${`${row}\n`.repeat(Math.ceil(maxBytes / (row.length + 1)) + 1)}`) }
	);
}

// ---------------------------------------------------------------------------------------------
// Fixtures and routes
// ---------------------------------------------------------------------------------------------

let owner: Member;
let ws: string;
let packId: string;
let specId: string;
let chargerId: string;
let sessionId: string;
let plannedId: string;
let stepId: string;
let alertId: string;
let technicianId: string;
let deviceToken: string;
let readingId: string;
let groupIds: string[] = [];

type Target = { name: string; send: fc.Arbitrary<Send>; run: (send: Send) => unknown };

function targets(): Target[] {
	const p = { workshop: ws };
	const pk = { workshop: ws, packId };
	const se = { workshop: ws, sessionId };
	const api = (who: Member | null, path: string, params: Record<string, string>, method: string, handler: (e: never) => unknown) => (send: Send) =>
		handler(event(who, path, params, method, send));
	const action = (path: string, params: Record<string, string>, handler: (e: never) => unknown) => (send: Send) =>
		handler(event(owner, path, params, 'POST', send));

	const packBody = () => ({ name: 'Fuzz pack', cellSpecId: specId, series: 2, parallel: 1, status: 'building', notes: 'ok', measuredPeakAmps: 20, measuredPeakNote: '' });
	const channel = { name: 'Out', maxVolts: 30, maxAmps: 10, maxWatts: null, balanceAmps: null, maxSeriesCells: null };
	const chargerBody = () => ({ name: 'Bench supply', kind: 'bench-supply', notes: '', channels: [channel] });
	const planBody = () => ({
		packId,
		kind: 'one-at-a-time',
		target: 'full',
		chargerId,
		plannedStart: '2026-12-03T21:00',
		swapMinutes: 5,
		startVolts: Object.fromEntries(groupIds.map((g) => [g, 3.7]))
	});
	const reading = () => ({ clientId: `fz-${Math.random().toString(36).slice(2)}`, takenAt: new Date(Date.now() - 60_000).toISOString(), groupIndex: 1, volts: 3.9, amps: 2, tempC: 25 });
	const specFields = () => ({ name: 'Fuzz cell', chemistry: 'builtin:nmc', capacityAh: '3', maxContinuousAmps: '10', maxChargeAmps: '3', resistanceMilliOhms: '20' });
	const packFields = () => ({ name: 'Form pack', cellSpecId: specId, series: '2', parallel: '1', status: 'planning', packOwnerId: '', notes: '' });
	const p256dh = Buffer.concat([Buffer.from([4]), randomBytes(64)]).toString('base64url');

	return [
		// JSON API
		{ name: 'POST packs', send: jsonSend(mutated(packBody)), run: api(owner, `/api/w/${ws}/packs`, p, 'POST', packsApi.POST as never) },
		{ name: 'PATCH pack', send: jsonSend(mutated(packBody)), run: api(owner, `/api/w/${ws}/packs/${packId}`, pk, 'PATCH', packApi.PATCH as never) },
		{
			name: 'POST cells',
			send: jsonSend(mutated(() => ({ cells: [{ label: 'F1', volts: 3.6, resistanceMilliOhms: 20, capacityAh: 3 }, { label: 'F2', volts: 3.61 }] }))),
			run: api(owner, `/api/w/${ws}/packs/${packId}/cells`, pk, 'POST', cellsApi.POST as never)
		},
		{ name: 'POST matching', send: jsonSend(mutated(() => ({ includeSuspect: true }))), run: api(owner, `/api/w/${ws}/packs/${packId}/matching`, pk, 'POST', matchingApi.POST as never) },
		{ name: 'PUT matching', send: jsonSend(mutated(() => ({ groups: [[newId()], [newId()]], replace: false, version: 'v1' }))), run: api(owner, `/api/w/${ws}/packs/${packId}/matching`, pk, 'PUT', matchingApi.PUT as never) },
		{ name: 'POST chargers', send: jsonSend(mutated(chargerBody)), run: api(owner, `/api/w/${ws}/chargers`, p, 'POST', chargersApi.POST as never) },
		{ name: 'POST sessions', send: jsonSend(mutated(planBody)), run: api(owner, `/api/w/${ws}/sessions`, p, 'POST', sessionsApi.POST as never) },
		{
			name: 'PATCH session',
			send: jsonSend(mutated(() => ({ name: 'Renamed', swapMinutes: 10, plannedStart: '2026-12-04T21:00' }))),
			run: api(owner, `/api/w/${ws}/sessions/${plannedId}`, { workshop: ws, sessionId: plannedId }, 'PATCH', sessionApi.PATCH as never)
		},
		{ name: 'POST status', send: jsonSend(mutated(() => ({ action: 'resume', reason: 'x' }))), run: api(owner, `/api/w/${ws}/sessions/${sessionId}/status`, se, 'POST', statusApi.POST as never) },
		{
			name: 'POST step',
			send: jsonSend(mutated(() => ({ action: 'start' }))),
			run: api(owner, `/api/w/${ws}/sessions/${sessionId}/steps/${stepId}`, { ...se, stepId }, 'POST', stepApi.POST as never)
		},
		{ name: 'POST watch', send: jsonSend(mutated(() => ({ userId: technicianId }))), run: api(owner, `/api/w/${ws}/sessions/${sessionId}/watch`, se, 'POST', watchApi.POST as never) },
		{
			name: 'POST readings (member)',
			send: jsonSend(mutated(() => ({ readings: [reading(), { ...reading(), groupIndex: 2 }] }))),
			run: api(owner, `/api/w/${ws}/sessions/${sessionId}/readings`, se, 'POST', readingsApi.POST as never)
		},
		{
			name: 'POST readings (device token)',
			send: fc
				.tuple(jsonSend(mutated(() => ({ readings: [reading()] }))), fc.oneof({ weight: 6, arbitrary: fc.constant('good') }, { weight: 1, arbitrary: hostileText }, { weight: 1, arbitrary: fc.constantFrom('csd_', 'Bearer', 'Basic abc', 'Bearer ') }))
				.map(([send, token]) => ({
					...send,
					headers: { ...send.headers, authorization: token === 'good' ? `Bearer ${deviceToken}` : token.startsWith('B') ? token : `Bearer ${token.replace(/[^\x20-\x7e]/g, '?')}` }
				})),
			run: api(null, `/api/w/${ws}/sessions/${sessionId}/readings`, se, 'POST', readingsApi.POST as never)
		},
		{
			name: 'PATCH reading',
			send: jsonSend(mutated(() => ({ volts: 3.95, note: 'typo', tempC: 26 }))),
			run: api(owner, `/api/w/${ws}/sessions/${sessionId}/readings/${readingId}`, { ...se, readingId }, 'PATCH', readingApi.PATCH as never)
		},
		{ name: 'POST tokens', send: jsonSend(mutated(() => ({ name: 'Logger 2' }))), run: api(owner, `/api/w/${ws}/sessions/${sessionId}/tokens`, se, 'POST', tokensApi.POST as never) },
		{
			name: 'POST watchers',
			send: jsonSend(mutated(() => ({ userId: technicianId, watching: true }))),
			run: api(owner, `/api/w/${ws}/sessions/${sessionId}/watchers`, se, 'POST', watchersApi.POST as never)
		},
		{
			name: 'POST alert ack',
			send: jsonSend(mutated(() => ({ note: 'Disconnected the charger.' }))),
			run: api(owner, `/api/w/${ws}/alerts/${alertId}/ack`, { workshop: ws, alertId }, 'POST', ackApi.POST as never)
		},
		{
			name: 'PATCH alert settings',
			send: jsonSend(mutated(() => ({ emailAlerts: true, pushAlerts: false, quietFrom: '22:00', quietTo: '07:00' }))),
			run: api(owner, `/api/w/${ws}/alert-settings`, p, 'PATCH', alertSettingsApi.PATCH as never)
		},
		{
			name: 'POST push subscription',
			send: jsonSend(mutated(() => ({ endpoint: 'https://push-service.invalid/send/fuzz', keys: { p256dh, auth: randomBytes(16).toString('base64url') }, label: 'Phone' }))),
			run: api(owner, '/api/push-subscriptions', {}, 'POST', pushApi.POST as never)
		},
		{ name: 'DELETE push subscription', send: jsonSend(mutated(() => ({ endpoint: 'https://push-service.invalid/send/none' }))), run: api(owner, '/api/push-subscriptions', {}, 'DELETE', pushApi.DELETE as never) },

		// Form actions
		{ name: 'form new cell spec', send: formSend(specFields), run: action(`/w/${ws}/cell-specs/new`, p, newSpecPage.actions.default as never) },
		{ name: 'form edit cell spec', send: formSend(specFields), run: action(`/w/${ws}/cell-specs/${specId}`, { workshop: ws, specId }, editSpecPage.actions.default as never) },
		{ name: 'form new pack', send: formSend(packFields), run: action(`/w/${ws}/packs/new`, p, newPackPage.actions.default as never) },
		{ name: 'form edit pack', send: formSend(packFields), run: action(`/w/${ws}/packs/${packId}/edit`, pk, editPackPage.actions.default as never) },
		{
			name: 'form add cells',
			send: formSend(() => ({ rows: JSON.stringify([{ label: 'R1', volts: '3.6' }]) })),
			run: action(`/w/${ws}/packs/${packId}/cells`, pk, cellsPage.actions.addCells as never)
		},
		{ name: 'form correct cell', send: formSend(() => ({ cellId: newId(), label: 'E1', volts: '3.6' })), run: action(`/w/${ws}/packs/${packId}/cells`, pk, cellsPage.actions.correct as never) },
		{ name: 'form remove cell', send: formSend(() => ({ cellId: newId() })), run: action(`/w/${ws}/packs/${packId}/cells`, pk, cellsPage.actions.remove as never) },
		{
			name: 'cells CSV upload',
			send: fc.oneof(
				{ weight: 5, arbitrary: csvText('label,volts,resistance,capacity', 'Z1,3.6,20,3', 1_000_000).map((csv) => formOf({ csv })) },
				{ weight: 1, arbitrary: formSend(() => ({ csv: 'label,volts\nQ1,3.6' })) }
			),
			run: action(`/w/${ws}/packs/${packId}/cells`, pk, cellsPage.actions.importCsv as never)
		},
		{ name: 'form new charger', send: superJsonSend(chargerBody), run: action(`/w/${ws}/chargers/new`, p, newChargerPage.actions.default as never) },
		{ name: 'form edit charger', send: superJsonSend(chargerBody), run: action(`/w/${ws}/chargers/${chargerId}`, { workshop: ws, chargerId }, chargerPage.actions.save as never) },
		{
			name: 'form new chemistry profile',
			send: superJsonSend(() => ({ name: 'My NMC', source: 'datasheet', ...formValuesOf(chemistries.nmc) })),
			run: action(`/w/${ws}/chemistries/new`, p, newChemistryPage.actions.default as never)
		},
		{
			name: 'form plan session',
			send: fc.oneof(
				{ weight: 5, arbitrary: mutated(planBody).map((b) => formOf({ plan: JSON.stringify(b) ?? '' })) },
				{ weight: 1, arbitrary: formSend(() => ({ plan: '{}' })) }
			),
			run: action(`/w/${ws}/sessions/new`, p, newSessionPage.actions.default as never)
		},
		{
			name: 'form edit plan',
			send: fc.oneof(
				{ weight: 5, arbitrary: mutated(planBody).map((b) => formOf({ plan: JSON.stringify(b) ?? '' })) },
				{ weight: 1, arbitrary: formSend(() => ({ plan: '{}' })) }
			),
			run: action(`/w/${ws}/sessions/${plannedId}/plan`, { workshop: ws, sessionId: plannedId }, planPage.actions.default as never)
		},
		{ name: 'form issue device token', send: formSend(() => ({ name: 'Logger 3' })), run: action(`/w/${ws}/sessions/${sessionId}/devices`, se, devicesPage.actions.issue as never) },
		{ name: 'form revoke device token', send: formSend(() => ({ tokenId: newId() })), run: action(`/w/${ws}/sessions/${sessionId}/devices`, se, devicesPage.actions.revoke as never) },
		{
			name: 'form logger column map',
			send: formSend(() => ({ time: 'Time', group: 'Group', volts: 'Volts', tempC: 'Temp' })),
			run: action(`/w/${ws}/sessions/${sessionId}/upload`, se, uploadPage.actions.saveMapping as never)
		},
		{
			name: 'logger CSV upload',
			send: fc.oneof(
				{ weight: 5, arbitrary: csvText('Time,Group,Volts,Temp', '2026-12-01 22:00,1,3.912,24.5', LOGGER_CSV_MAX_BYTES).map((csv) => formOf({ csv })) },
				{ weight: 1, arbitrary: formSend(() => ({ csv: 'Time,Group,Volts\n2026-12-01 22:00,1,3.9' })) }
			),
			run: action(`/w/${ws}/sessions/${sessionId}/upload`, se, uploadPage.actions.importCsv as never)
		},
		{
			name: 'form acknowledge alert',
			send: formSend(() => ({ note: 'Checked the pack.' })),
			run: action(`/w/${ws}/alerts/${alertId}`, { workshop: ws, alertId }, alertPage.actions.acknowledge as never)
		},
		{ name: 'form rename workshop', send: formSend(() => ({ name: 'Fuzz bench', timeZone: 'Europe/Berlin' })), run: action(`/w/${ws}/workshop`, p, workshopPage.actions.rename as never) },
		{ name: 'form escalation', send: formSend(() => ({ escalationMinutes: '15' })), run: action(`/w/${ws}/workshop`, p, workshopPage.actions.escalation as never) },
		{ name: 'form invite member', send: formSend(() => ({ email: 'new.member@example.test', role: 'technician' })), run: action(`/w/${ws}/workshop/members`, p, membersPage.actions.invite as never) },
		{ name: 'form change role', send: formSend(() => ({ userId: technicianId, role: 'viewer' })), run: action(`/w/${ws}/workshop/members`, p, membersPage.actions.changeRole as never) },
		{ name: 'form remove member', send: formSend(() => ({ userId: newId() })), run: action(`/w/${ws}/workshop/members`, p, membersPage.actions.remove as never) },
		{ name: 'form revoke invitation', send: formSend(() => ({ invitationId: newId() })), run: action(`/w/${ws}/workshop/members`, p, membersPage.actions.revoke as never) },
		{ name: 'form new workshop', send: formSend(() => ({ name: 'Second bench', timeZone: 'UTC' })), run: action('/account', {}, accountPage.actions.createWorkshop as never) },
		{ name: 'form unlink sign-in', send: formSend(() => ({ provider: 'google' })), run: action('/account', {}, accountPage.actions.unlink as never) },

		// Attachments: files of the wrong type, empty, too large, or no file at all.
		{
			name: 'attachment upload',
			send: fc.oneof(
				{
					weight: 6,
					arbitrary: fc
						.tuple(
							fc.oneof(
								fc.uint8Array({ maxLength: 300 }),
								fc.constantFrom(
									new Uint8Array([0x7f, 0x45, 0x4c, 0x46, 2, 1, 1, 0]),
									new TextEncoder().encode('<svg xmlns="http://www.w3.org/2000/svg"><script>alert(1)</script></svg>'),
									new TextEncoder().encode('<html><body>hi</body></html>'),
									new Uint8Array([0xff, 0xd8, 0xff, 0xe0, 0, 0]), // a JPEG's first bytes, then nothing
									new Uint8Array([0x89, 0x50, 0x4e, 0x47, 0x0d, 0x0a, 0x1a, 0x0a]), // a PNG signature alone
									new TextEncoder().encode('%PDF-1.4\n%%EOF'),
									new Uint8Array(0)
								)
							),
							fc.oneof(hostileText, fc.constantFrom('photo.jpg', 'doc.pdf', 'x.png', '../../etc/passwd', 'a.exe', '', '.jpg')),
							fc.constantFrom('file', 'files', 'upload')
						)
						.map(([bytes, name, field]) => formOf({ [field]: new File([bytes], name, { type: 'image/jpeg' }) }))
				},
				{ weight: 1, arbitrary: fc.constant(null).map(() => formOf({ file: new File([new Uint8Array(ATTACHMENT_MAX_BYTES + 1)], 'huge.jpg', { type: 'image/jpeg' }) })) },
				{ weight: 1, arbitrary: formSend(() => ({ file: 'not a file' })) }
			),
			run: action(`/w/${ws}/packs/${packId}/attachments`, pk, attachmentsRoute.POST as never)
		}
	];
}

// ---------------------------------------------------------------------------------------------

beforeAll(async () => {
	const admin = postgres(adminUrl(), { max: 1, onnotice: () => {} });
	await admin.unsafe(`create database ${fuzzDb}`);
	await admin.end();
	const u = new URL(sharedUrl);
	u.pathname = `/${fuzzDb}`;
	const mine = postgres(u.toString(), { max: 1, onnotice: () => {} });
	await migrate(drizzle(mine), { migrationsFolder: path.resolve('drizzle') });
	await mine.end();
	await closeDb();
	process.env.DATABASE_URL = u.toString();
	rereadServerEnv();
	await mkdir(path.join(dataDir, 'attachments'), { recursive: true });

	const f = await sessionFixture({ series: 4 });
	owner = f.owner;
	ws = f.ws;
	packId = f.pack.id;
	sessionId = f.session.id;
	stepId = f.steps[1].id;
	groupIds = f.groups.map((g) => g.id);
	[{ specId }] = await db.select({ specId: packs.cellSpecId }).from(packs).where(eq(packs.id, packId));
	plannedId = (await addSession(owner, packId, 'planned')).id;
	technicianId = (await joinAs(owner, 'technician')).user.id;

	const charger = (await chargersApi.POST(
		event(owner, `/api/w/${ws}/chargers`, { workshop: ws }, 'POST', {
			body: JSON.stringify({ name: 'Bench', kind: 'bench-supply', channels: [{ name: 'Out', maxVolts: 30, maxAmps: 10 }] }),
			headers: { 'content-type': 'application/json' }
		})
	)) as Response;
	expect(charger.status).toBe(201);
	[{ chargerId }] = await db.select({ chargerId: chargers.id }).from(chargers).where(eq(chargers.workshopId, owner.workshop.id));

	const issued = await issueDeviceToken(owner, sessionId, 'Logger');
	if (!issued.ok) throw new Error(issued.message);
	deviceToken = issued.token;
	const posted = (await readingsApi.POST(
		event(null, `/api/w/${ws}/sessions/${sessionId}/readings`, { workshop: ws, sessionId }, 'POST', {
			body: JSON.stringify({ readings: [{ clientId: 'seed-1', takenAt: new Date(Date.now() - 120_000).toISOString(), groupIndex: 1, volts: 3.9 }] }),
			headers: { 'content-type': 'application/json', authorization: `Bearer ${deviceToken}` }
		})
	)) as Response;
	expect(posted.status).toBe(201);
	readingId = String(((await posted.json()) as { readings: { id: number | string }[] }).readings[0].id);
	await saveLoggerMapping(owner, { time: 'Time', group: 'Group', volts: 'Volts', tempC: 'Temp' });

	const [alert] = await db
		.insert(alerts)
		.values({
			id: newId(),
			workshopId: owner.workshop.id,
			packId,
			sessionId,
			groupId: null,
			groupKey: '',
			kind: 'over-voltage',
			severity: 'warning',
			title: 'Group 2: over voltage',
			message: 'Group 2 is at 4.31 V, over the 4.25 V limit.',
			action: 'Disconnect the charger from group 2.',
			value: 4.31,
			threshold: 4.25,
			unit: 'V',
			lastSeenAt: new Date(),
			openedAt: new Date()
		})
		.returning();
	alertId = alert.id;

	tables = (
		(await sqlClient().unsafe(
			`select table_name from information_schema.tables where table_schema = 'public' and table_type = 'BASE TABLE' order by table_name`
		)) as unknown as { table_name: string }[]
	)
		.map((r) => r.table_name)
		.filter((t) => !SKIP_TABLES.has(t));
}, 120_000);

afterAll(async () => {
	await stopBoss(); // readings that raise an alert hand its delivery to pg-boss, which holds connections
	await closeDb();
	const admin = postgres(adminUrl(), { max: 1, onnotice: () => {} });
	await admin.unsafe(`drop database if exists ${fuzzDb} with (force)`);
	await admin.end();
	await rm(dataDir, { recursive: true, force: true });
});

describe('what the fuzzer found, kept as examples', () => {
	it('refuses a plan whose current is too small to end (5e-324 A gave step times past any date: a 500)', async () => {
		const before = await snapshot();
		const plan = { packId, kind: 'one-at-a-time', target: 'full', chargerId, plannedStart: '2026-12-03T21:00', swapMinutes: 5, amps: Number.MIN_VALUE, startVolts: Object.fromEntries(groupIds.map((g) => [g, 3.7])) };
		const got = await answer(() =>
			sessionsApi.POST(event(owner, `/api/w/${ws}/sessions`, { workshop: ws }, 'POST', { body: JSON.stringify(plan), headers: { 'content-type': 'application/json' } }))
		);
		expect(got.status).toBe(400);
		expect(got.texts.join(' ')).toMatch(/more than 10 years/);
		expect(await snapshot()).toEqual(before);
	});

	it('answers a plan form whose body is not a readable form with a 400 (it was a TypeError: a 500)', async () => {
		const broken = { body: '--zzz\r\nContent-Disposition: form-data; name="plan"\r\n\r\n{', headers: { 'content-type': 'multipart/form-data; boundary=zzz' } };
		for (const [path, params, handler] of [
			[`/w/${ws}/sessions/new`, { workshop: ws }, newSessionPage.actions.default],
			[`/w/${ws}/sessions/${plannedId}/plan`, { workshop: ws, sessionId: plannedId }, planPage.actions.default]
		] as const) {
			const got = await answer(() => (handler as (e: never) => unknown)(event(owner, path, params, 'POST', broken)));
			expect(got.status, path).toBe(400);
			expect(got.texts.join(' ')).toMatch(/did not arrive whole/);
		}
	});

	it('gives a superforms form that could not be read a message (it answered 400 with no words at all)', async () => {
		for (const send of [
			{ body: 'name=x', headers: { 'content-type': 'text/plain' } },
			{ body: '--zzz\r\nContent-Disposition: form-data; name="name"\r\n\r\nx', headers: { 'content-type': 'multipart/form-data; boundary=zzz' } }
		]) {
			const got = await answer(() => newSpecPage.actions.default(event(owner, `/w/${ws}/cell-specs/new`, { workshop: ws }, 'POST', send) as never));
			expect(got.status).toBe(400);
			expect(got.texts).toEqual([UNREADABLE_FORM]);
		}
	});

	it('refuses a JSON form whose data is a list where the form is an object (superforms threw a TypeError: a 500)', async () => {
		const before = await snapshot();
		for (const data of [[1, 2], [{ name: 'Bench' }], { name: 'Bench', kind: 'bench-supply', channels: [[1]] }]) {
			const got = await answer(() =>
				chargerPage.actions.save(event(owner, `/w/${ws}/chargers/${chargerId}`, { workshop: ws, chargerId }, 'POST', formOf({ __superform_json: stringify(data) })) as never)
			);
			expect(got.status, JSON.stringify(data)).toBe(400);
			expect(got.texts.length, JSON.stringify(data)).toBeGreaterThan(0);
		}
		expect(await snapshot()).toEqual(before);
	});
});

describe('generated hostile input', () => {
	it('notices a change: the checksum moves when one value of one row does, and comes back with it', async () => {
		const before = await snapshot();
		const [row] = await db.select({ notes: packs.notes }).from(packs).where(eq(packs.id, packId));
		await db.update(packs).set({ notes: `${row.notes}.` }).where(eq(packs.id, packId));
		const changed = await snapshot();
		expect(Object.keys(changed).filter((k) => changed[k] !== before[k])).toEqual(['packs']);
		await db.update(packs).set({ notes: row.notes }).where(eq(packs.id, packId));
		expect(await snapshot()).toEqual(before);
		expect(tables).toEqual(expect.arrayContaining(['packs', 'cells', 'readings', 'alerts', 'audit_events', 'device_tokens', 'attachments']));
	});

	it(`answers ${RUNS} generated requests with a 4xx and a plain message, and writes nothing when it refuses`, async () => {
		console.log(`hostile-fuzz: seed ${SEED}, ${RUNS} runs (replay: CELLSITTER_FUZZ_SEED=${SEED})`);
		const all = targets();
		const byName = new Map(all.map((t) => [t.name, t]));
		const tally = new Map<string, { sent: number; accepted: number; statuses: Set<number> }>(all.map((t) => [t.name, { sent: 0, accepted: 0, statuses: new Set() }]));
		let before = await snapshot();
		let filesBefore = await storedFiles();
		const started = Date.now();

		await fc.assert(
			fc.asyncProperty(
				fc.nat(all.length - 1).chain((i) => all[i].send.map((send) => ({ route: all[i].name, send }))),
				async ({ route, send }) => {
					const target = byName.get(route)!;
					const got = await answer(() => target.run(send));
					const t = tally.get(target.name)!;
					t.sent++;
					t.statuses.add(got.status);
					const where = `${target.name} → ${got.status} ${got.raw.slice(0, 300)}`;
					expect(got.status, where).toBeLessThan(500);
					if (got.status < 400) {
						// A body that happened to be valid: its changes are the new baseline.
						t.accepted++;
						before = await snapshot();
						filesBefore = await storedFiles();
						return;
					}
					expect(got.texts.length, `${where}: no message`).toBeGreaterThan(0);
					for (const text of got.texts) expect(text, where).not.toMatch(STACK);
					const after = await snapshot();
					const changed = Object.keys(after).filter((k) => after[k] !== before[k]);
					expect(changed, `${where}: tables changed by a refused request`).toEqual([]);
					expect(await storedFiles(), `${where}: files left behind`).toEqual(filesBefore);
				}
			),
			{ numRuns: RUNS, seed: SEED, endOnFailure: false }
		);

		const seconds = ((Date.now() - started) / 1000).toFixed(1);
		console.log(`hostile-fuzz: ${RUNS} requests in ${seconds} s over ${all.length} routes`);
		for (const [name, t] of tally) console.log(`  ${name}: ${t.sent} sent, ${t.accepted} accepted, statuses ${[...t.statuses].sort().join(' ')}`);
		// Every route was reached, and every one refused something.
		for (const [name, t] of tally) {
			expect(t.sent, name).toBeGreaterThan(0);
			expect(t.sent - t.accepted, name).toBeGreaterThan(0);
		}
	}, STRESS ? 1_800_000 : 120_000);
});

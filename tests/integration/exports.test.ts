/**
 * Exports against a real PostgreSQL: the CSV files (header, units, times with the workshop's
 * offset, formula-looking text made inert, cells in label order), a session's readings imported
 * back through the logger upload, who may download what, and the owner's zip read back with a
 * small reader written here from the ZIP format's own layout (PKWARE APPNOTE.TXT, sections 4.3.7,
 * 4.3.12 and 4.3.16), checking every entry's CRC-32 with Node's zlib.
 */
import { inflateRawSync, crc32 } from 'node:zlib';
import { asc, eq } from 'drizzle-orm';
import Papa from 'papaparse';
import { describe, expect, it } from 'vitest';
import { guessLoggerMapping, readLoggerHeader } from '$lib/logger-csv';
import type { Member } from '$lib/server/auth/permissions';
import { addCells } from '$lib/server/cells';
import { db } from '$lib/server/db';
import { alerts, packGroups, packs, readings, voltageChecks } from '$lib/server/db/schema';
import { sessionReadingsCsv } from '$lib/server/exports';
import { newId } from '$lib/server/ids';
import { importLoggerCsv, saveLoggerMapping } from '$lib/server/sessions/logger';
import { logReadings } from '$lib/server/sessions/readings';
import * as readingsRoute from '../../src/routes/(app)/w/[workshop=slug]/sessions/[sessionId=id]/readings.csv/+server';
import * as cellsRoute from '../../src/routes/(app)/w/[workshop=slug]/packs/[packId=id]/cells.csv/+server';
import * as alertsRoute from '../../src/routes/(app)/w/[workshop=slug]/alerts/alerts.csv/+server';
import * as zipRoute from '../../src/routes/(app)/w/[workshop=slug]/workshop/export.zip/+server';
import { apiEvent, joinAs } from './helpers';
import { addSession, sessionFixture } from './readings-fixture';

type Fixture = Awaited<ReturnType<typeof sessionFixture>>;

/** Readings over the last 50 minutes: groups 1–4, a whole-pack row, a negative current, a note that looks like a formula, a time with milliseconds. */
async function logSome(f: Fixture) {
	const base = Math.floor(Date.now() / 60_000) * 60_000 - 50 * 60_000;
	const at = (min: number, ms = 0) => new Date(base + min * 60_000 + ms).toISOString();
	const inputs = [
		{ clientId: newId(), groupIndex: 1, takenAt: at(0), volts: 3.912, amps: 2, tempC: 24.5, ambientC: 21 },
		{ clientId: newId(), groupIndex: 2, takenAt: at(0), volts: 3.905, amps: -3.2, tempC: 24.1 },
		{ clientId: newId(), groupIndex: null, takenAt: at(1), volts: 15.62, note: '=HYPERLINK("http://x","y")' },
		{ clientId: newId(), groupIndex: 4, takenAt: at(2, 250), volts: 3.95, note: 'checked, fine' },
		{ clientId: newId(), groupIndex: 1, takenAt: at(30), volts: 4.05, amps: 1.25, tempC: 26 }
	];
	const stored = await logReadings({ kind: 'member', member: f.owner }, f.session.id, inputs, 'hand');
	expect(stored).toMatchObject({ ok: true, stored: inputs.length });
	return inputs;
}

async function get<H extends (e: never) => Response | Promise<Response>>(handler: H, who: Member, path: string, params: Record<string, string>): Promise<Response> {
	try {
		return await handler(apiEvent(who, path, params) as never);
	} catch (e) {
		const thrown = e as { status?: number; body?: { message: string } };
		if (typeof thrown.status === 'number') return new Response(thrown.body?.message ?? '', { status: thrown.status });
		throw e;
	}
}

/** The response's text (checking the UTF-8 byte-order mark that spreadsheets need), parsed by its header. */
async function readCsv(response: Response) {
	const bytes = Buffer.from(await response.arrayBuffer());
	expect([...bytes.subarray(0, 3)]).toEqual([0xef, 0xbb, 0xbf]);
	const text = bytes.subarray(3).toString('utf8');
	return { text, ...parseCsv(text) };
}

function parseCsv(text: string) {
	const parsed = Papa.parse<Record<string, string>>(text, { header: true, skipEmptyLines: true });
	expect(parsed.errors).toEqual([]);
	return parsed;
}

async function storedRows(sessionId: string) {
	const rows = await db
		.select({ takenAt: readings.takenAt, group: packGroups.index, volts: readings.volts, amps: readings.amps, tempC: readings.tempC, ambientC: readings.ambientC, note: readings.note })
		.from(readings)
		.leftJoin(packGroups, eq(packGroups.id, readings.groupId))
		.where(eq(readings.sessionId, sessionId))
		.orderBy(asc(readings.takenAt), asc(packGroups.index));
	return rows.map((r) => ({ ...r, takenAt: r.takenAt.toISOString() }));
}

/** Entries of a zip by name → bytes, from its central directory (APPNOTE 4.3.16 end record, 4.3.12 headers). */
function readZip(zip: Buffer): Map<string, Buffer> {
	const eocd = zip.lastIndexOf(Buffer.from([0x50, 0x4b, 0x05, 0x06]));
	expect(eocd).toBeGreaterThan(0);
	const count = zip.readUInt16LE(eocd + 10);
	let p = zip.readUInt32LE(eocd + 16);
	const entries = new Map<string, Buffer>();
	for (let i = 0; i < count; i++) {
		expect(zip.readUInt32LE(p)).toBe(0x02014b50);
		const method = zip.readUInt16LE(p + 10);
		const crc = zip.readUInt32LE(p + 16);
		const compressed = zip.readUInt32LE(p + 20);
		const size = zip.readUInt32LE(p + 24);
		const nameLength = zip.readUInt16LE(p + 28);
		const extraLength = zip.readUInt16LE(p + 30);
		const commentLength = zip.readUInt16LE(p + 32);
		const local = zip.readUInt32LE(p + 42);
		const name = zip.subarray(p + 46, p + 46 + nameLength).toString('utf8');
		expect(zip.readUInt32LE(local)).toBe(0x04034b50);
		const start = local + 30 + zip.readUInt16LE(local + 26) + zip.readUInt16LE(local + 28);
		const raw = zip.subarray(start, start + compressed);
		const data = method === 8 ? inflateRawSync(raw) : Buffer.from(raw);
		expect(data.length).toBe(size);
		expect(crc32(data) >>> 0).toBe(crc);
		entries.set(name, data);
		p += 46 + nameLength + extraLength + commentLength;
	}
	return entries;
}

describe('CSV exports', () => {
	it('writes a session’s readings with units in the header, offset times and inert formulas', async () => {
		const f = await sessionFixture({ series: 4 });
		const inputs = await logSome(f);
		const response = await get(readingsRoute.GET, f.owner, `/w/${f.ws}/sessions/${f.session.id}/readings.csv`, { workshop: f.ws, sessionId: f.session.id });
		expect(response.status).toBe(200);
		expect(response.headers.get('content-type')).toMatch(/^text\/csv; charset=utf-8/);
		expect(response.headers.get('content-disposition')).toMatch(/^attachment; filename="readings-Test-pack-Readings-[\w-]+\.csv"/);
		const { text, ...parsed } = await readCsv(response);
		expect(parsed.meta.fields?.slice(0, 7)).toEqual(['taken_at', 'group', 'volts_V', 'amps_A', 'temp_C', 'ambient_C', 'note']);
		expect(parsed.meta.fields).toContain('volts_per_cell_V');
		expect(parsed.data).toHaveLength(inputs.length);
		// Europe/Berlin in December is UTC+1: the fixture's zone, worked by hand.
		for (const row of parsed.data) expect(row.taken_at).toMatch(/^\d{4}-\d{2}-\d{2}T\d{2}:\d{2}:\d{2}(\.\d{3})?\+01:00$/);
		const first = inputs[0];
		const wall = new Date(Date.parse(first.takenAt) + 3_600_000).toISOString().slice(0, 19);
		expect(parsed.data[0]).toMatchObject({ taken_at: `${wall}+01:00`, group: '1', volts_V: '3.912', amps_A: '2', temp_C: '24.5', ambient_C: '21' });
		expect(parsed.data[1]).toMatchObject({ group: '2', amps_A: '-3.2' });
		// The whole-pack row: pack volts, and per cell 15.62 ÷ 4 = 3.905.
		expect(parsed.data[2]).toMatchObject({ group: 'pack', volts_V: '15.62', volts_per_cell_V: '3.905', note: `'=HYPERLINK("http://x","y")` });
		expect(parsed.data[3].taken_at).toMatch(/\.250\+01:00$/);
		// In the file itself: the negative current is a bare number; the formula is quoted behind an apostrophe.
		expect(text).toContain(',-3.2,');
		expect(text).toContain(`"'=HYPERLINK(""http://x"",""y"")"`);
		expect(text.split('\r\n').length).toBe(inputs.length + 2);
	});

	it('imports back through the logger upload to the same rows', async () => {
		const f = await sessionFixture({ series: 4 });
		await logSome(f);
		const { csv } = await sessionReadingsCsv(f.owner, f.session.id);
		// The upload screen's own guess maps the export's columns.
		const mapping = guessLoggerMapping(readLoggerHeader(csv).headers);
		expect(mapping).toEqual({ time: 'taken_at', group: 'group', volts: 'volts_V', amps: 'amps_A', tempC: 'temp_C', ambientC: 'ambient_C', note: 'note' });
		await saveLoggerMapping(f.owner, mapping);
		const fresh = await addSession(f.owner, f.pack.id, 'running');
		expect(await importLoggerCsv(f.owner, fresh.id, csv)).toEqual({ ok: true, stored: 5, duplicates: 0 });
		const before = await storedRows(f.session.id);
		const after = await storedRows(fresh.id);
		// Same times, groups and values; only the formula-looking note keeps its inert apostrophe.
		expect(after).toEqual(before.map((r) => ({ ...r, note: r.note.startsWith('=') ? `'${r.note}` : r.note })));
		expect(after.map((r) => r.takenAt)).toContain(before[3].takenAt);
		expect(before[3].takenAt).toMatch(/\.250Z$/);
	});

	it('lists a pack’s cells in label order with units', async () => {
		const f = await sessionFixture({ series: 4 });
		const added = await addCells(f.owner, f.pack.id, [
			{ label: 'C10', volts: 3.61, resistanceMilliOhms: 18, capacityAh: 4.02 },
			{ label: 'C2', volts: 3.6, resistanceMilliOhms: null, capacityAh: null },
			{ label: 'C1', volts: 3.62, resistanceMilliOhms: 17.5, capacityAh: 4.1 }
		]);
		expect(added).toMatchObject({ ok: true });
		const response = await get(cellsRoute.GET, f.owner, `/w/${f.ws}/packs/${f.pack.id}/cells.csv`, { workshop: f.ws, packId: f.pack.id });
		const parsed = await readCsv(response);
		expect(parsed.meta.fields?.slice(0, 6)).toEqual(['label', 'placement', 'group', 'arrival_volts_V', 'resistance_mOhm', 'capacity_Ah']);
		expect(parsed.data.map((r) => r.label)).toEqual(['C1', 'C2', 'C10']);
		expect(parsed.data[2]).toMatchObject({ arrival_volts_V: '3.61', resistance_mOhm: '18', capacity_Ah: '4.02' });
		expect(parsed.data[1]).toMatchObject({ resistance_mOhm: '', capacity_Ah: '' });
	});

	it('writes the alert log, all or one session’s', async () => {
		const f = await sessionFixture({ series: 4 });
		const other = await addSession(f.owner, f.pack.id, 'done');
		const opened = new Date('2026-11-05T20:00:00Z');
		for (const [sessionId, kind] of [
			[f.session.id, 'over-voltage'],
			[other.id, 'reading-overdue']
		] as const)
			await db.insert(alerts).values({
				id: newId(),
				workshopId: f.owner.workshop.id,
				packId: f.pack.id,
				sessionId,
				groupId: null,
				groupKey: '',
				kind,
				severity: 'warning',
				title: `${kind} here`,
				message: 'Group 2 is at 4.31 V, over the 4.25 V limit.',
				value: 4.31,
				threshold: 4.25,
				unit: 'V',
				openedAt: opened,
				lastSeenAt: opened
			});
		const all = await readCsv(await get(alertsRoute.GET, f.owner, `/w/${f.ws}/alerts/alerts.csv`, { workshop: f.ws }));
		expect(all.data.filter((r) => r.pack === 'Test pack')).toHaveLength(2);
		expect(all.data[0]).toMatchObject({ opened_at: '2026-11-05T21:00:00+01:00', value: '4.31', threshold: '4.25', unit: 'V', acknowledged_at: '' });
		const one = await readCsv(await get(alertsRoute.GET, f.owner, `/w/${f.ws}/alerts/alerts.csv?session=${other.id}`, { workshop: f.ws }));
		expect(one.data.map((r) => r.kind)).toEqual(['reading-overdue']);
	});
});

describe('who may download what', () => {
	it('a viewer reads their own pack’s session CSV, not another pack’s, and gets 403 on the workshop zip', async () => {
		const f = await sessionFixture({ series: 4 });
		await logSome(f);
		const viewer = await joinAs(f.owner, 'viewer');
		const path = `/w/${f.ws}/sessions/${f.session.id}/readings.csv`;
		const params = { workshop: f.ws, sessionId: f.session.id };
		expect((await get(readingsRoute.GET, viewer, path, params)).status).toBe(404);
		await db.update(packs).set({ packOwnerId: viewer.user.id }).where(eq(packs.id, f.pack.id));
		const own = await get(readingsRoute.GET, viewer, path, params);
		expect(own.status).toBe(200);
		expect((await readCsv(own)).data).toHaveLength(5);

		const zip = await get(zipRoute.GET, viewer, `/w/${f.ws}/workshop/export.zip`, { workshop: f.ws });
		expect(zip.status).toBe(403);
		expect(await zip.text()).toMatch(/Only an owner can download the whole workshop/);
		for (const role of ['builder', 'technician'] as const) {
			const who = await joinAs(f.owner, role);
			expect((await get(zipRoute.GET, who, `/w/${f.ws}/workshop/export.zip`, { workshop: f.ws })).status).toBe(403);
		}
	});

	it('the owner’s zip holds every pack’s cells, every session’s readings, alerts, sessions, steps and audit', async () => {
		const f = await sessionFixture({ series: 4 });
		await logSome(f);
		await addCells(f.owner, f.pack.id, [{ label: 'C1', volts: 3.6, resistanceMilliOhms: null, capacityAh: null }]);
		const second = await addSession(f.owner, f.pack.id, 'done');
		await db.insert(voltageChecks).values({
			id: newId(),
			workshopId: f.owner.workshop.id,
			packId: f.pack.id,
			groupId: f.groups[2].id,
			volts: 3.412,
			measuredAt: new Date('2026-11-05T20:00:00Z'),
			enteredBy: f.owner.user.id
		});
		const response = await get(zipRoute.GET, f.owner, `/w/${f.ws}/workshop/export.zip`, { workshop: f.ws });
		expect(response.status).toBe(200);
		expect(response.headers.get('content-type')).toBe('application/zip');
		expect(response.headers.get('content-disposition')).toMatch(/^attachment; filename="cellsitter-[\w-]+-\d{4}-\d{2}-\d{2}\.zip"/);
		expect(response.headers.get('content-length')).toBeNull();
		const entries = readZip(Buffer.from(await response.arrayBuffer()));
		const names = [...entries.keys()];
		for (const name of ['README.txt', 'packs.csv', 'sessions.csv', 'steps.csv', 'alerts.csv', 'audit.csv', 'cells/Test-pack.csv']) expect(names).toContain(name);
		const readingFiles = names.filter((n) => n.startsWith('readings/'));
		expect(readingFiles).toHaveLength(2);
		const sessions = Papa.parse<Record<string, string>>(entries.get('sessions.csv')!.toString('utf8'), { header: true, skipEmptyLines: true }).data;
		expect(sessions.map((s) => s.session_id).sort()).toEqual([f.session.id, second.id].sort());
		const steps = Papa.parse<Record<string, string>>(entries.get('steps.csv')!.toString('utf8'), { header: true, skipEmptyLines: true }).data;
		expect(steps.filter((s) => s.session_id === f.session.id)).toHaveLength(4);
		const mine = readingFiles.find((n) => n.endsWith(`${f.session.id.slice(0, 8)}.csv`))!;
		const rows = Papa.parse<Record<string, string>>(entries.get(mine)!.toString('utf8'), { header: true, skipEmptyLines: true }).data;
		expect(rows).toHaveLength(5);
		expect(entries.get('cells/Test-pack.csv')!.toString('utf8')).toMatch(/^label,placement,group,arrival_volts_V/);
		const checks = Papa.parse<Record<string, string>>(entries.get('voltage-checks.csv')!.toString('utf8').replace(/^\uFEFF/, ''), { header: true, skipEmptyLines: true }).data;
		expect(checks.map((c) => [c.group, c.volts_V, c.cell])).toEqual([['3', '3.412', '']]);
	});
});

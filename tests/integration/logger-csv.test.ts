import { and, eq } from 'drizzle-orm';
import { describe, expect, it } from 'vitest';
import { db } from '$lib/server/db';
import { auditEvents, readings } from '$lib/server/db/schema';
import { getLoggerMapping, importLoggerCsv, saveLoggerMapping } from '$lib/server/sessions/logger';
import { actions } from '../../src/routes/(app)/w/[workshop=slug]/sessions/[sessionId=id]/upload/+page.server';
import { joinAs } from './helpers';
import { sessionFixture } from './readings-fixture';

// The fixture's workshop is in Europe/Berlin (UTC+1 in winter): 22:00 there is 21:00 UTC.
const csv = [
	'Zeit;Gruppe;Spannung;Temp',
	'2026-12-01 22:00;1;3,912;24,5',
	'2026-12-01 22:00;2;3,905;24,1',
	'2026-12-01 22:00;;15,62;',
	'2026-12-01 22:30;1;3,931;24,9'
].join('\r\n');
const mapping = { time: 'Zeit', group: 'Gruppe', volts: 'Spannung', tempC: 'Temp' };

async function stored(sessionId: string) {
	return db.select().from(readings).where(eq(readings.sessionId, sessionId));
}

describe('logger CSV upload', () => {
	it('imports a file once: the same file uploaded twice adds nothing', async () => {
		const { owner, session } = await sessionFixture({ series: 4 });
		expect(await importLoggerCsv(owner, session.id, csv)).toMatchObject({ ok: false, status: 400, message: expect.stringMatching(/column/) });
		await saveLoggerMapping(owner, mapping);
		expect(await getLoggerMapping(owner)).toEqual(mapping);

		expect(await importLoggerCsv(owner, session.id, csv)).toEqual({ ok: true, stored: 4, duplicates: 0 });
		expect(await importLoggerCsv(owner, session.id, csv)).toEqual({ ok: true, stored: 0, duplicates: 4 });
		const rows = await stored(session.id);
		expect(rows).toHaveLength(4);
		expect(rows.every((r) => r.source === 'file' && r.enteredBy === owner.user.id)).toBe(true);
		const pack = rows.find((r) => r.groupId === null);
		expect(pack).toMatchObject({ volts: 15.62, clientId: 'file:2026-12-01T21:00:00.000Z:pack' });
		expect(pack?.takenAt.toISOString()).toBe('2026-12-01T21:00:00.000Z');

		// The same file with one more row at the end adds only that row.
		const longer = `${csv}\r\n2026-12-01 23:00;1;3,950;25,2\r\n`;
		expect(await importLoggerCsv(owner, session.id, longer)).toEqual({ ok: true, stored: 1, duplicates: 4 });

		const trail = await db
			.select()
			.from(auditEvents)
			.where(and(eq(auditEvents.kind, 'logger-mapping.update'), eq(auditEvents.workshopId, owner.workshop.id)));
		expect(trail).toHaveLength(1);
	});

	it('stores none of a file with one bad row and names the row', async () => {
		const { owner, session } = await sessionFixture({ series: 4 });
		await saveLoggerMapping(owner, mapping);
		const bad = `${csv}\r\n2026-12-01 23:00;9;3,950;25,2`;
		const result = await importLoggerCsv(owner, session.id, bad);
		expect(result).toMatchObject({ ok: false, status: 400 });
		if (result.ok) return;
		expect(result.errors).toEqual([{ row: 6, message: expect.stringMatching(/^row 6: group "9"/) }]);
		expect(await stored(session.id)).toHaveLength(0);
	});

	it('goes through the page action: a technician imports, a file over 5 MB gets 413 in words, a viewer is refused', async () => {
		const { owner, session, ws } = await sessionFixture({ series: 4 });
		await saveLoggerMapping(owner, mapping);
		const tech = await joinAs(owner, 'technician');
		const post = (who: typeof owner, text: string) => {
			const body = new FormData();
			body.set('csv', text);
			const url = new URL(`http://127.0.0.1/w/${ws}/sessions/${session.id}/upload?/importCsv`);
			return actions.importCsv({
				locals: { user: who.user, session: null },
				params: { workshop: ws, sessionId: session.id },
				url,
				request: new Request(url, { method: 'POST', body })
			} as unknown as Parameters<typeof actions.importCsv>[0]);
		};
		expect(await post(tech, csv)).toEqual({ stored: 4, duplicates: 0 });
		const huge = await post(tech, `Zeit;Gruppe;Spannung;Temp\n${'2026-12-01 22:00;1;3,912;24,5\n'.repeat(200_000)}`);
		expect(huge).toMatchObject({ status: 413, data: { message: expect.stringMatching(/larger than 5 MB/) } });
		const viewer = await joinAs(owner, 'viewer');
		await expect(post(viewer, csv)).rejects.toMatchObject({ status: 403 });
		expect(await stored(session.id)).toHaveLength(4);
	});

	it('refuses a column map with control characters or without a time column, and keeps the saved one', async () => {
		const { owner, session, ws } = await sessionFixture({ series: 4 });
		await saveLoggerMapping(owner, mapping);
		const save = (fields: Record<string, string>) => {
			const body = new FormData();
			for (const [k, v] of Object.entries(fields)) body.set(k, v);
			const url = new URL(`http://127.0.0.1/w/${ws}/sessions/${session.id}/upload?/saveMapping`);
			return actions.saveMapping({
				locals: { user: owner.user, session: null },
				params: { workshop: ws, sessionId: session.id },
				url,
				request: new Request(url, { method: 'POST', body })
			} as unknown as Parameters<typeof actions.saveMapping>[0]);
		};
		expect(await save({ time: 'Zeit\u0000', volts: 'Spannung' })).toMatchObject({ status: 400, data: { mappingProblem: expect.stringMatching(/control characters/) } });
		expect(await save({ time: '', volts: 'Spannung' })).toMatchObject({ status: 400, data: { mappingProblem: expect.stringMatching(/time/) } });
		expect(await getLoggerMapping(owner)).toEqual(mapping);
		expect(await save({ time: 'Zeit', volts: 'Spannung', group: '' })).toEqual({ mappingDone: expect.any(String) });
		expect(await getLoggerMapping(owner)).toEqual({ time: 'Zeit', volts: 'Spannung' });
	});
});

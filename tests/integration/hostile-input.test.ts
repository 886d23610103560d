/**
 * Hostile input from outside: NUL and other control characters in every text field, bodies of the
 * wrong shape or type. Each must get a 4xx with a plain message and write nothing. The handlers
 * are called with a constructed request event, as the browser's requests would reach them.
 */
import { stringify } from 'devalue';
import { and, count, eq } from 'drizzle-orm';
import { beforeAll, describe, expect, it } from 'vitest';
import { chemistries } from '$lib/engine';
import { formValuesOf } from '$lib/chemistry-form';
import type { Member } from '$lib/server/auth/permissions';
import { db } from '$lib/server/db';
import { cells, chargers, chemistryProfiles, cellSpecs, packs, workshops } from '$lib/server/db/schema';
import { endpoint } from '$lib/server/api';
import { guardActions, inputProblem } from '$lib/server/input-problems';
import * as packsApi from '../../src/routes/api/w/[workshop=slug]/packs/+server';
import * as packApi from '../../src/routes/api/w/[workshop=slug]/packs/[packId=id]/+server';
import * as cellsApi from '../../src/routes/api/w/[workshop=slug]/packs/[packId=id]/cells/+server';
import * as matchingApi from '../../src/routes/api/w/[workshop=slug]/packs/[packId=id]/matching/+server';
import * as chargersApi from '../../src/routes/api/w/[workshop=slug]/chargers/+server';
import * as cellsPage from '../../src/routes/(app)/w/[workshop=slug]/packs/[packId=id]/cells/+page.server';
import * as newPackPage from '../../src/routes/(app)/w/[workshop=slug]/packs/new/+page.server';
import * as editPackPage from '../../src/routes/(app)/w/[workshop=slug]/packs/[packId=id]/edit/+page.server';
import * as newSpecPage from '../../src/routes/(app)/w/[workshop=slug]/cell-specs/new/+page.server';
import * as newChargerPage from '../../src/routes/(app)/w/[workshop=slug]/chargers/new/+page.server';
import * as newChemistryPage from '../../src/routes/(app)/w/[workshop=slug]/chemistries/new/+page.server';
import * as workshopPage from '../../src/routes/(app)/w/[workshop=slug]/workshop/+page.server';
import * as membersPage from '../../src/routes/(app)/w/[workshop=slug]/workshop/members/+page.server';
import * as accountPage from '../../src/routes/(app)/account/+page.server';
import { apiEvent, joinAs, packFixture } from './helpers';

// The characters that reached the database as 500s, and others no name should hold.
const NUL = '\u0000';
const hostile = [NUL, '\u0007', '\u001b[31m', '\u007f', '\u0085'];
const LINE = /control characters/;

type Handler = (event: never) => unknown;

/** A form action's request event: `fields` as the browser posts them (FormData). */
function formEvent(who: Member, path: string, params: Record<string, string>, fields: Record<string, string>) {
	const url = new URL(`http://127.0.0.1${path}`);
	const form = new FormData();
	for (const [k, v] of Object.entries(fields)) form.append(k, v);
	return {
		locals: { user: who.user, session: null },
		params,
		url,
		request: new Request(url, { method: 'POST', body: form })
	} as never;
}

/** The same for a superforms form with dataType 'json' (the charger and chemistry forms). */
function jsonFormEvent(who: Member, path: string, params: Record<string, string>, data: unknown) {
	return formEvent(who, path, params, { __superform_json: stringify(data) });
}

/** The status and every message of an action's answer, whether returned or thrown. */
async function outcome(run: () => unknown): Promise<{ status: number; text: string }> {
	try {
		const result = (await run()) as { status?: number; data?: unknown } | undefined;
		return { status: result?.status ?? 200, text: JSON.stringify(result?.data ?? result ?? null) };
	} catch (e) {
		const err = e as { status?: number; body?: { message?: string }; location?: string };
		if (err.location) return { status: err.status ?? 0, text: err.location };
		if (typeof err.status === 'number') return { status: err.status, text: err.body?.message ?? '' };
		throw e;
	}
}

async function apiOutcome(response: Response | Promise<Response>) {
	const r = await response;
	return { status: r.status, body: (await r.json()) as { message: string; errors?: { path: string; message: string }[] } };
}

let owner: Member;
let ws: string;
let packId: string;
let specId: string;

const countOf = async (table: typeof packs | typeof chargers | typeof chemistryProfiles | typeof cellSpecs) =>
	(await db.select({ n: count() }).from(table).where(eq(table.workshopId, owner.workshop.id)))[0].n;
const cellCount = async () => (await db.select({ n: count() }).from(cells).where(eq(cells.packId, packId)))[0].n;

beforeAll(async () => {
	const fixture = await packFixture({ series: 2, parallel: 1 });
	owner = fixture.owner;
	ws = owner.workshop.slug;
	packId = fixture.pack.id;
	specId = fixture.spec.id;
});

describe('control characters through the JSON API', () => {
	const goodPack = () => ({ name: 'Kart pack', cellSpecId: specId, series: 2, parallel: 1 });

	it.each([
		['name', (c: string) => ({ name: `Kart${c}pack` })],
		['notes', (c: string) => ({ notes: `welded${c}` })],
		['measuredPeakNote', (c: string) => ({ measuredPeakNote: `${c}clamp` })]
	])('refuses a new pack with a control character in %s', async (field, patch) => {
		const before = await countOf(packs);
		for (const c of hostile) {
			const answer = await apiOutcome(
				packsApi.POST(apiEvent(owner, `/api/w/${ws}/packs`, { workshop: ws }, { method: 'POST', body: { ...goodPack(), ...patch(c) } }))
			);
			expect(answer.status, JSON.stringify(c)).toBe(400);
			expect(answer.body.errors).toEqual([{ path: field, message: expect.stringMatching(/control characters/) }]);
		}
		expect(await countOf(packs)).toBe(before);
	});

	it('refuses a PATCH with a control character and leaves the pack as it was; line breaks and tabs stay allowed in notes', async () => {
		const params = { workshop: ws, packId };
		const base = `/api/w/${ws}/packs/${packId}`;
		const [before] = await db.select().from(packs).where(eq(packs.id, packId));
		for (const body of [{ name: `A${NUL}` }, { notes: `x${NUL}y` }, { measuredPeakNote: '\u001b' }, { packOwnerId: NUL }]) {
			const answer = await apiOutcome(packApi.PATCH(apiEvent(owner, base, params, { method: 'PATCH', body })));
			expect(answer.status, JSON.stringify(body)).toBe(400);
			expect(answer.body.message).toBeTruthy();
		}
		const [after] = await db.select().from(packs).where(eq(packs.id, packId));
		expect(after).toEqual(before);

		const notes = 'Group 1\tfine\r\nGroup 2\twarm';
		const ok = await packApi.PATCH(apiEvent(owner, base, params, { method: 'PATCH', body: { notes } }));
		expect(ok.status).toBe(200);
		expect((await db.select().from(packs).where(eq(packs.id, packId)))[0].notes).toBe(notes);
	});

	it('refuses a cell label with a control character, and adds none of the batch', async () => {
		const params = { workshop: ws, packId };
		for (const c of hostile) {
			const cellsSent = [
				{ label: 'C1', volts: 3.6 },
				{ label: `C${c}2`, volts: 3.6 }
			];
			const answer = await apiOutcome(cellsApi.POST(apiEvent(owner, `/api/w/${ws}/packs/${packId}/cells`, params, { method: 'POST', body: { cells: cellsSent } })));
			expect(answer.status).toBe(400);
			expect(answer.body.errors).toEqual([{ path: 'cells.1.label', message: expect.stringMatching(LINE) }]);
		}
		expect(await cellCount()).toBe(0);
	});

	it('refuses cell ids that are not ids in an assignment', async () => {
		const params = { workshop: ws, packId };
		const answer = await apiOutcome(
			matchingApi.PUT(apiEvent(owner, `/api/w/${ws}/packs/${packId}/matching`, params, { method: 'PUT', body: { groups: [[`a${NUL}`], ['b']] } }))
		);
		expect(answer.status).toBe(400);
	});

	it.each([
		['name', (c: string) => ({ name: `Bench${c}` })],
		['notes', (c: string) => ({ notes: `${c}` })],
		['channels.0.name', (c: string) => ({ channels: [{ name: `Left${c}`, maxVolts: 30, maxAmps: 10 }] })]
	])('refuses a charger with a control character in %s', async (field, patch) => {
		const before = await countOf(chargers);
		for (const c of hostile) {
			const body = { name: 'Bench supply', kind: 'bench-supply', channels: [{ name: 'Out', maxVolts: 30, maxAmps: 10 }], ...patch(c) };
			const answer = await apiOutcome(chargersApi.POST(apiEvent(owner, `/api/w/${ws}/chargers`, { workshop: ws }, { method: 'POST', body })));
			expect(answer.status, JSON.stringify(c)).toBe(400);
			expect(answer.body.errors).toEqual([{ path: field, message: expect.stringMatching(/control characters/) }]);
		}
		expect(await countOf(chargers)).toBe(before);
	});

	it('answers 415 to a body that is not declared as JSON, on every endpoint that takes one', async () => {
		const params = { workshop: ws, packId };
		const sends: [string, Handler, string][] = [
			[`/api/w/${ws}/packs`, packsApi.POST as Handler, 'POST'],
			[`/api/w/${ws}/packs/${packId}`, packApi.PATCH as Handler, 'PATCH'],
			[`/api/w/${ws}/packs/${packId}/cells`, cellsApi.POST as Handler, 'POST'],
			[`/api/w/${ws}/packs/${packId}/matching`, matchingApi.POST as Handler, 'POST'],
			[`/api/w/${ws}/packs/${packId}/matching`, matchingApi.PUT as Handler, 'PUT'],
			[`/api/w/${ws}/chargers`, chargersApi.POST as Handler, 'POST']
		];
		for (const [path, handler, method] of sends) {
			const url = new URL(`http://127.0.0.1${path}`);
			const event = {
				locals: { user: owner.user, session: null },
				params,
				url,
				request: new Request(url, { method, body: '{}', headers: { 'content-type': 'text/plain;charset=UTF-8' } })
			} as never;
			const answer = (await handler(event)) as Response;
			expect(answer.status, `${method} ${path}`).toBe(415);
			expect(((await answer.json()) as { message: string }).message).toBe('Send the body as JSON, with the header Content-Type: application/json.');
		}
	});
});

describe('control characters and bad shapes through the form actions', () => {
	const cellsPath = () => `/w/${ws}/packs/${packId}/cells`;

	it('refuses add-cells rows that are not a list of entries, and a label with a control character', async () => {
		const params = { workshop: ws, packId };
		for (const rows of ['{"label":"C1"}', '[1,2]', '[null]', '"C1"', '[[]]', 'null', '[{"label":{"x":1},"volts":"3.6"}]', JSON.stringify([{ label: `C${NUL}1`, volts: '3.6' }])]) {
			const answer = await outcome(() => cellsPage.actions.addCells(formEvent(owner, cellsPath(), params, { rows })));
			expect(answer.status, rows).toBe(400);
			expect(answer.text, rows).toMatch(/entryProblem/);
		}
		expect(await cellCount()).toBe(0);
	});

	it('refuses a CSV whose label holds a control character, naming the row', async () => {
		const params = { workshop: ws, packId };
		const csv = `label,volts\nC1,3.6\nC${NUL}2,3.6\n`;
		const answer = await outcome(() => cellsPage.actions.importCsv(formEvent(owner, cellsPath(), params, { csv })));
		expect(answer.status).toBe(400);
		expect(answer.text).toMatch(/row 3/);
		expect(answer.text).toMatch(/control character/);
		expect(await cellCount()).toBe(0);
	});

	it('refuses an edit of a cell with a control character in the label, or without a cell id', async () => {
		const params = { workshop: ws, packId };
		const added = await cellsApi.POST(
			apiEvent(owner, `/api/w/${ws}/packs/${packId}/cells`, params, { method: 'POST', body: { cells: [{ label: 'E1', volts: 3.61 }] } })
		);
		expect(added.status).toBe(201);
		const [cell] = await db.select().from(cells).where(and(eq(cells.packId, packId), eq(cells.label, 'E1')));
		const edits: Record<string, string>[] = [
			{ cellId: cell.id, label: `E${NUL}1`, volts: '3.6' },
			{ cellId: cell.id, label: 'E1\u001b', volts: '3.6' },
			{ cellId: `${cell.id}${NUL}`, label: 'E2', volts: '3.6' },
			{ label: 'E2', volts: '3.6' }
		];
		for (const fields of edits) {
			const answer = await outcome(() => cellsPage.actions.correct(formEvent(owner, cellsPath(), params, fields)));
			expect(answer.status, JSON.stringify(fields)).toBe(400);
			expect(answer.text).toMatch(/correctProblem/);
		}
		const answer = await outcome(() => cellsPage.actions.remove(formEvent(owner, cellsPath(), params, { cellId: `x${NUL}` })));
		expect(answer.status).toBe(400);
		const [after] = await db.select().from(cells).where(eq(cells.id, cell.id));
		expect(after).toEqual(cell);
		await db.delete(cells).where(eq(cells.id, cell.id));
	});

	it('refuses a new or edited pack with a control character, saving nothing', async () => {
		const before = await countOf(packs);
		const [packBefore] = await db.select().from(packs).where(eq(packs.id, packId));
		const good = { name: 'Form pack', cellSpecId: specId, series: '2', parallel: '1', status: 'planning', packOwnerId: '', notes: '' };
		for (const c of hostile) {
			for (const bad of [{ name: `Form${c}` }, { notes: `x${c}` }]) {
				if (c !== NUL && 'notes' in bad && /[\t\n\r]/.test(c)) continue;
				const created = await outcome(() =>
					newPackPage.actions.default(formEvent(owner, `/w/${ws}/packs/new`, { workshop: ws }, { ...good, ...bad }))
				);
				expect(created.status, JSON.stringify(bad)).toBe(400);
				expect(created.text).toMatch(/control characters/);
				const edited = await outcome(() =>
					editPackPage.actions.default(formEvent(owner, `/w/${ws}/packs/${packId}/edit`, { workshop: ws, packId }, { ...good, ...bad }))
				);
				expect(edited.status, JSON.stringify(bad)).toBe(400);
			}
		}
		expect(await countOf(packs)).toBe(before);
		expect((await db.select().from(packs).where(eq(packs.id, packId)))[0]).toEqual(packBefore);
	});

	it('refuses a cell spec, a charger and a chemistry profile named with a control character', async () => {
		const [specs, chargerRows, profiles] = await Promise.all([countOf(cellSpecs), countOf(chargers), countOf(chemistryProfiles)]);
		const spec = { name: `Cell${NUL}`, chemistry: 'builtin:nmc', capacityAh: '3', maxContinuousAmps: '10', maxChargeAmps: '3' };
		const a = await outcome(() => newSpecPage.actions.default(formEvent(owner, `/w/${ws}/cell-specs/new`, { workshop: ws }, spec)));
		expect(a.status).toBe(400);
		expect(a.text).toMatch(/control characters/);

		const charger = { name: 'Bench', kind: 'bench-supply', notes: '', channels: [{ name: 'Out', maxVolts: 30, maxAmps: 10, maxWatts: null, balanceAmps: null, maxSeriesCells: null }] };
		for (const bad of [{ name: `B${NUL}` }, { notes: `n${NUL}` }, { channels: [{ ...charger.channels[0], name: `O${NUL}` }] }]) {
			const b = await outcome(() => newChargerPage.actions.default(jsonFormEvent(owner, `/w/${ws}/chargers/new`, { workshop: ws }, { ...charger, ...bad })));
			expect(b.status, JSON.stringify(bad)).toBe(400);
			expect(b.text).toMatch(/control characters/);
		}

		const profile = { name: 'My NMC', source: '', ...formValuesOf(chemistries.nmc) };
		for (const bad of [{ name: `N${NUL}` }, { source: `datasheet${NUL}` }]) {
			const c = await outcome(() =>
				newChemistryPage.actions.default(jsonFormEvent(owner, `/w/${ws}/chemistries/new`, { workshop: ws }, { ...profile, ...bad }))
			);
			expect(c.status, JSON.stringify(bad)).toBe(400);
			expect(c.text).toMatch(/control characters/);
		}
		expect([await countOf(cellSpecs), await countOf(chargers), await countOf(chemistryProfiles)]).toEqual([specs, chargerRows, profiles]);
	});

	it('refuses a workshop name with a control character, and a technician renaming at all', async () => {
		const renamed = await outcome(() =>
			workshopPage.actions.rename(formEvent(owner, `/w/${ws}/workshop`, { workshop: ws }, { name: `Bench${NUL}`, timeZone: 'UTC' }))
		);
		expect(renamed.status).toBe(400);
		expect(renamed.text).toMatch(/control characters/);
		const created = await outcome(() => accountPage.actions.createWorkshop(formEvent(owner, '/account', {}, { name: `New${NUL}`, timeZone: 'UTC' })));
		expect(created.status).toBe(400);
		expect(created.text).toMatch(/control characters/);
		const [row] = await db.select().from(workshops).where(eq(workshops.id, owner.workshop.id));
		expect(row.name).toBe(owner.workshop.name);

		// The permission is asked before the input is read, so even a bad form gets the 403.
		const tech = await joinAs(owner, 'technician');
		const byTech = await outcome(() => workshopPage.actions.rename(formEvent(tech, `/w/${ws}/workshop`, { workshop: ws }, { name: '', timeZone: 'UTC' })));
		expect(byTech.status).toBe(403);
		for (const [name, action] of Object.entries(membersPage.actions)) {
			const answer = await outcome(() => action(formEvent(tech, `/w/${ws}/workshop/members`, { workshop: ws }, { userId: owner.user.id, role: 'viewer' })));
			expect(answer.status, name).toBe(403);
		}
	});

	it('refuses member and invitation ids that are not ids', async () => {
		for (const [action, fields] of [
			[membersPage.actions.revoke, { invitationId: `x${NUL}` }],
			[membersPage.actions.remove, { userId: `x${NUL}` }],
			[membersPage.actions.changeRole, { userId: `x${NUL}`, role: 'viewer' }]
		] as const) {
			const answer = await outcome(() => action(formEvent(owner, `/w/${ws}/workshop/members`, { workshop: ws }, fields)));
			expect(answer.status, JSON.stringify(fields)).toBe(400);
		}
	});
});

describe('bodies that are not readable forms', () => {
	it('answers 400 from every action that reads its form itself', async () => {
		const broken = (path: string, params: Record<string, string>, who: Member = owner) => {
			const url = new URL(`http://127.0.0.1${path}`);
			// A multipart body cut off before its closing boundary.
			const body = '--zzz\r\nContent-Disposition: form-data; name="rows"\r\n\r\n[1';
			return {
				locals: { user: who.user, session: null },
				params,
				url,
				request: new Request(url, { method: 'POST', body, headers: { 'content-type': 'multipart/form-data; boundary=zzz' } })
			} as never;
		};
		const pack = { workshop: ws, packId };
		const members = { workshop: ws };
		const cases: [string, Handler, never][] = [
			['addCells', cellsPage.actions.addCells as Handler, broken(`/w/${ws}/packs/${packId}/cells`, pack)],
			['importCsv', cellsPage.actions.importCsv as Handler, broken(`/w/${ws}/packs/${packId}/cells`, pack)],
			['correct', cellsPage.actions.correct as Handler, broken(`/w/${ws}/packs/${packId}/cells`, pack)],
			['remove', cellsPage.actions.remove as Handler, broken(`/w/${ws}/packs/${packId}/cells`, pack)],
			['changeRole', membersPage.actions.changeRole as Handler, broken(`/w/${ws}/workshop/members`, members)],
			['remove member', membersPage.actions.remove as Handler, broken(`/w/${ws}/workshop/members`, members)],
			['revoke', membersPage.actions.revoke as Handler, broken(`/w/${ws}/workshop/members`, members)],
			['unlink', accountPage.actions.unlink as Handler, broken('/account', {})]
		];
		for (const [name, action, event] of cases) {
			const answer = await outcome(() => action(event));
			expect(answer.status, name).toBe(400);
			expect(answer.text, name).toMatch(/could not be read/);
		}
		expect(await cellCount()).toBe(0);
	});
});

describe('database errors that bad input can cause', () => {
	it('maps them to 400 or 409 with a plain message, and leaves other errors alone', async () => {
		const nul = await db
			.update(workshops)
			.set({ name: `x${NUL}` })
			.where(eq(workshops.id, owner.workshop.id))
			.catch((e: unknown) => e);
		expect(inputProblem(nul)).toEqual({ status: 400, message: expect.stringMatching(/characters/) });

		const dup = await db
			.insert(cellSpecs)
			.values({ id: specId, workshopId: owner.workshop.id, name: 'dup', chemistryId: 'nmc', capacityAh: 3, maxContinuousAmps: 10, maxChargeAmps: 3 })
			.catch((e: unknown) => e);
		expect(inputProblem(dup)).toMatchObject({ status: 409 });

		const range = await db.update(packs).set({ series: 0 }).where(eq(packs.id, packId)).catch((e: unknown) => e);
		expect(inputProblem(range)).toMatchObject({ status: 400 });

		expect(inputProblem(new Error('a bug'))).toBeNull();
	});

	it('answers them from a form action and from an endpoint as 4xx, and lets bugs through as bugs', async () => {
		const duplicateSpec = () =>
			db.insert(cellSpecs).values({ id: specId, workshopId: owner.workshop.id, name: 'dup', chemistryId: 'nmc', capacityAh: 3, maxContinuousAmps: 10, maxChargeAmps: 3 });
		const actions = guardActions({
			race: async (_event: unknown) => {
				await duplicateSpec();
				return {};
			},
			bug: async (_event: unknown) => {
				throw new Error('a bug');
			}
		});
		await expect(actions.race({})).rejects.toMatchObject({ status: 409, body: { message: expect.stringMatching(/already saved/) } });
		await expect(actions.bug({})).rejects.toThrow('a bug');

		const handler = endpoint(async () => {
			await duplicateSpec();
			return new Response(null, { status: 201 });
		});
		const answer = await handler({});
		expect(answer.status).toBe(409);
		expect(((await answer.json()) as { message: string }).message).toMatch(/already saved/);
	});
});

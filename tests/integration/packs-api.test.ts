import { eq } from 'drizzle-orm';
import { describe, expect, it } from 'vitest';
import { db } from '$lib/server/db';
import { packs } from '$lib/server/db/schema';
import * as packsApi from '../../src/routes/api/w/[workshop=slug]/packs/+server';
import * as packApi from '../../src/routes/api/w/[workshop=slug]/packs/[packId=id]/+server';
import * as cellsApi from '../../src/routes/api/w/[workshop=slug]/packs/[packId=id]/cells/+server';
import * as matchingApi from '../../src/routes/api/w/[workshop=slug]/packs/[packId=id]/matching/+server';
import { apiEvent, joinAs, packFixture } from './helpers';

type Ev = Parameters<typeof packsApi.POST>[0];

describe('the packs JSON API', () => {
	it('creates a pack, takes a batch of cells, proposes and accepts a matching', async () => {
		const { owner, spec } = await packFixture({ series: 1, parallel: 1 });
		const ws = owner.workshop.slug;
		const created = await packsApi.POST(
			apiEvent<Ev>(owner, `/api/w/${ws}/packs`, { workshop: ws }, {
				method: 'POST',
				body: { name: 'API pack', cellSpecId: spec.id, series: 2, parallel: 2 }
			})
		);
		expect(created.status).toBe(201);
		const { pack } = (await created.json()) as { pack: { id: string; series: number } };
		const params = { workshop: ws, packId: pack.id };
		const base = `/api/w/${ws}/packs/${pack.id}`;

		// Invented measurements; the first one would make the batch fail as a duplicate of itself.
		const cells = [4.0, 4.1, 3.9, 4.05, 3.95].map((capacityAh, i) => ({ label: `P${i}`, volts: 3.6, capacityAh }));
		const dup = await cellsApi.POST(apiEvent(owner, `${base}/cells`, params, { method: 'POST', body: { cells: [...cells, cells[0]] } }));
		expect(dup.status).toBe(400);
		expect(((await dup.json()) as { errors: { path: string }[] }).errors[0].path).toBe('cells.5.label');
		const added = await cellsApi.POST(apiEvent(owner, `${base}/cells`, params, { method: 'POST', body: { cells } }));
		expect(added.status).toBe(201);
		const again = await cellsApi.POST(apiEvent(owner, `${base}/cells`, params, { method: 'POST', body: { cells: [cells[1]] } }));
		expect(again.status).toBe(409);

		const proposed = await matchingApi.POST(apiEvent(owner, `${base}/matching`, params, { method: 'POST', body: {} }));
		expect(proposed.status).toBe(200);
		const proposal = (await proposed.json()) as { groups: { cellIds: string[] }[]; spares: string[]; spreadAh: number };
		expect(proposal.groups).toHaveLength(2);
		expect(proposal.spares).toHaveLength(1);
		const accepted = await matchingApi.PUT(
			apiEvent(owner, `${base}/matching`, params, { method: 'PUT', body: { groups: proposal.groups.map((g) => g.cellIds) } })
		);
		expect(accepted.status).toBe(200);
		expect(await accepted.json()).toEqual({ ok: true, placed: 4, spares: 1 });

		const read = await packApi.GET(apiEvent(owner, base, params));
		const view = (await read.json()) as { pack: { series: number }; ratings: { capacityAh: number } };
		// 2P of a 4 Ah spec: 8 Ah (the fixture's spec), written out here.
		expect(view.ratings.capacityAh).toBe(8);

		const patched = await packApi.PATCH(apiEvent(owner, base, params, { method: 'PATCH', body: { parallel: 3 } }));
		expect(await patched.json()).toMatchObject({ clearedAssignment: true, pack: { parallel: 3 } });
	});

	it('answers 401 signed out, 400 with field paths, 403 by role and 404 across workshops', async () => {
		const { owner, pack } = await packFixture({ series: 1, parallel: 1 });
		const ws = owner.workshop.slug;
		const params = { workshop: ws, packId: pack.id };
		await expect(packsApi.GET(apiEvent(null, `/api/w/${ws}/packs`, { workshop: ws }))).rejects.toMatchObject({ status: 401 });

		const bad = await packsApi.POST(apiEvent<Ev>(owner, `/api/w/${ws}/packs`, { workshop: ws }, { method: 'POST', body: { name: '', series: 0 } }));
		expect(bad.status).toBe(400);
		const paths = ((await bad.json()) as { errors: { path: string }[] }).errors.map((e) => e.path);
		expect(paths).toEqual(expect.arrayContaining(['name', 'series', 'cellSpecId', 'parallel']));

		const tech = await joinAs(owner, 'technician');
		await expect(packApi.PATCH(apiEvent(tech, '/x', params, { method: 'PATCH', body: { series: 3 } }))).rejects.toMatchObject({ status: 403 });
		await expect(matchingApi.POST(apiEvent(tech, '/x', params, { method: 'POST', body: {} }))).rejects.toMatchObject({ status: 403 });
		expect((await cellsApi.GET(apiEvent(tech, '/x', params))).status).toBe(200);

		const stranger = await packFixture({ series: 1, parallel: 1 });
		await expect(packApi.GET(apiEvent(stranger.owner, '/x', { workshop: stranger.owner.workshop.slug, packId: pack.id }))).rejects.toMatchObject({ status: 404 });
	});
});

describe('PATCH of a pack', () => {
	it('changes only the keys sent and leaves every other field as it was', async () => {
		const { owner, spec } = await packFixture({ series: 1, parallel: 1 });
		const ws = owner.workshop.slug;
		const viewer = await joinAs(owner, 'viewer');
		// Every field away from its form default, so a default filled in by the schema would show.
		const full = {
			name: 'Trike 14S3P',
			cellSpecId: spec.id,
			series: 14,
			parallel: 3,
			bmsFitted: true,
			bmsBalanceAmps: 0.2,
			status: 'in-service',
			packOwnerId: viewer.user.id,
			measuredPeakAmps: 61.5,
			measuredPeakNote: 'clamp meter on the hill start',
			notes: 'Nickel strip 0.15 mm.\nFuse 80 A.'
		};
		const created = await packsApi.POST(apiEvent<Ev>(owner, `/api/w/${ws}/packs`, { workshop: ws }, { method: 'POST', body: full }));
		expect(created.status).toBe(201);
		const { pack } = (await created.json()) as { pack: { id: string } };
		const params = { workshop: ws, packId: pack.id };
		const base = `/api/w/${ws}/packs/${pack.id}`;

		const patched = await packApi.PATCH(apiEvent(owner, base, params, { method: 'PATCH', body: { parallel: 4 } }));
		expect(patched.status).toBe(200);
		const [row] = await db.select().from(packs).where(eq(packs.id, pack.id));
		expect(row).toMatchObject({ ...full, parallel: 4 });

		// The viewer still sees the pack they own.
		expect((await packApi.GET(apiEvent(viewer, base, params))).status).toBe(200);

		// A single text field, then a single flag: again nothing else moves.
		await packApi.PATCH(apiEvent(owner, base, params, { method: 'PATCH', body: { notes: 'Re-welded group 7.' } }));
		await packApi.PATCH(apiEvent(owner, base, params, { method: 'PATCH', body: { status: 'retired' } }));
		const [after] = await db.select().from(packs).where(eq(packs.id, pack.id));
		expect(after).toMatchObject({ ...full, parallel: 4, notes: 'Re-welded group 7.', status: 'retired' });
	});

	it('answers a body of the wrong shape (an array, null, a number) in plain words', async () => {
		const { owner, pack } = await packFixture({ series: 1, parallel: 1 });
		const ws = owner.workshop.slug;
		const params = { workshop: ws, packId: pack.id };
		for (const body of [[], null, 42, '"name"']) {
			const answer = await packApi.PATCH(apiEvent(owner, `/api/w/${ws}/packs/${pack.id}`, params, { method: 'PATCH', body }));
			expect(answer.status, JSON.stringify(body)).toBe(400);
			expect(((await answer.json()) as { message: string }).message).toBe('The request body must be a JSON object.');
		}
	});

	it('refuses a body that is not sent as application/json with 415, and changes nothing', async () => {
		const { owner, pack } = await packFixture({ series: 1, parallel: 1 });
		const ws = owner.workshop.slug;
		const params = { workshop: ws, packId: pack.id };
		for (const contentType of ['text/plain', 'application/x-www-form-urlencoded', null]) {
			const event = apiEvent<Parameters<typeof packApi.PATCH>[0]>(owner, `/api/w/${ws}/packs/${pack.id}`, params);
			const url = event.url;
			const headers: Record<string, string> = contentType ? { 'content-type': contentType } : {};
			(event as { request: Request }).request = new Request(url, { method: 'PATCH', body: '{"name":"Renamed"}', headers });
			const answer = await packApi.PATCH(event);
			expect(answer.status, String(contentType)).toBe(415);
			expect(((await answer.json()) as { message: string }).message).toMatch(/application\/json/);
		}
		const [row] = await db.select().from(packs).where(eq(packs.id, pack.id));
		expect(row.name).toBe('Test pack');
		const charset = apiEvent<Parameters<typeof packApi.PATCH>[0]>(owner, `/api/w/${ws}/packs/${pack.id}`, params);
		(charset as { request: Request }).request = new Request(charset.url, {
			method: 'PATCH',
			body: '{"name":"Renamed"}',
			headers: { 'content-type': 'application/json; charset=utf-8' }
		});
		expect((await packApi.PATCH(charset)).status).toBe(200);
	});
});

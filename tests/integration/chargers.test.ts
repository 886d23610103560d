import { and, eq } from 'drizzle-orm';
import { beforeAll, describe, expect, it } from 'vitest';
import { chemistries } from '$lib/engine';
import { findMember, type Member } from '$lib/server/auth/permissions';
import {
	createCharger,
	deleteCharger,
	getCharger,
	listChargers,
	toEngineChannel,
	updateCharger
} from '$lib/server/chargers';
import {
	createChemistryProfile,
	deleteChemistryProfile,
	getChemistryProfile,
	listChemistries,
	resolveChemistryRef,
	updateChemistryProfile
} from '$lib/server/chemistry-profiles';
import { db } from '$lib/server/db';
import { cellSpecs, chargerChannels, chargers, users } from '$lib/server/db/schema';
import { loadDemoChargers } from '$lib/server/demo/chargers';
import { newId } from '$lib/server/ids';
import { acceptInvitation, inviteMember } from '$lib/server/workshops-invitations';
import type { Role } from '$lib/permissions';
import type { ChargerInput } from '$lib/schemas/chargers';
import type { ChemistryProfileInput } from '$lib/schemas/chemistry';
import * as api from '../../src/routes/api/w/[workshop=slug]/chargers/+server';
import { apiEvent, signUpOwner } from './helpers';


async function memberOf(userId: string, slug: string): Promise<Member> {
	const [user] = await db.select().from(users).where(eq(users.id, userId));
	const member = await findMember({ id: user.id, email: user.email, name: user.name }, slug);
	if (!member) throw new Error('not a member');
	return member;
}

async function newOwner(label: string) {
	const owner = await signUpOwner(label);
	return memberOf(owner.userId, owner.workshopSlug);
}

/** Another person joins the owner's workshop with `role`, through an invitation. */
async function joinAs(owner: Member, role: Role): Promise<Member> {
	const person = await signUpOwner(role);
	const invited = await inviteMember(owner, { email: person.email, role });
	if (!invited.ok) throw new Error('invite failed');
	await acceptInvitation({ id: person.userId, email: person.email }, invited.link.split('/invite/')[1]);
	return memberOf(person.userId, owner.workshop.slug);
}

const twoChannels = (): ChargerInput => ({
	name: 'Dual bench charger',
	kind: 'multi-channel',
	notes: '200 W in all',
	channels: [
		{ name: 'Left', maxVolts: 25.2, maxAmps: 6, maxWatts: 100, balanceAmps: 0.4, maxSeriesCells: 6 },
		{ name: '', maxVolts: 16.8, maxAmps: 4, maxWatts: null, balanceAmps: null, maxSeriesCells: null }
	]
});

describe('chargers', () => {
	let owner: Member;
	beforeAll(async () => {
		owner = await newOwner('chargers');
	});

	it('creates a charger with two channels and reads it back in order', async () => {
		const created = await createCharger(owner, twoChannels());
		if (!created.ok) throw new Error(created.message);
		const charger = await getCharger(owner, created.charger.id);
		expect(charger).toMatchObject({
			name: 'Dual bench charger',
			kind: 'multi-channel',
			notes: '200 W in all',
			createdBy: owner.user.id,
			updatedBy: owner.user.id,
			updatedByName: owner.user.name
		});
		expect(charger.channels.map((c) => [c.position, c.name, c.maxVolts, c.maxAmps, c.maxWatts, c.balanceAmps, c.maxSeriesCells])).toEqual([
			[1, 'Left', 25.2, 6, 100, 0.4, 6],
			[2, 'Channel 2', 16.8, 4, null, null, null]
		]);
		expect(charger.channels.map(toEngineChannel)).toEqual([
			{ id: charger.channels[0].id, maxAmps: 6, maxVolts: 25.2, maxWatts: 100 },
			{ id: charger.channels[1].id, maxAmps: 4, maxVolts: 16.8 }
		]);

		const listed = await listChargers(owner);
		expect(listed.find((c) => c.id === charger.id)?.channels.map((c) => c.name)).toEqual(['Left', 'Channel 2']);
	});

	it('lists every charger once with all its channels, by name', async () => {
		const m = await newOwner('list');
		for (const [name, n] of [['Zeta', 3], ['Alpha', 1], ['Mid', 2]] as const) {
			const input = { ...twoChannels(), name, channels: Array.from({ length: n }, () => twoChannels().channels[0]) };
			expect((await createCharger(m, input)).ok).toBe(true);
		}
		const listed = await listChargers(m);
		expect(listed.map((c) => [c.name, c.channels.length])).toEqual([
			['Alpha', 1],
			['Mid', 2],
			['Zeta', 3]
		]);
	});

	it('refuses a second charger with the same name in a workshop', async () => {
		const m = await newOwner('dupe');
		expect((await createCharger(m, twoChannels())).ok).toBe(true);
		expect(await createCharger(m, twoChannels())).toMatchObject({ ok: false, reason: 'name-taken' });
		expect(await db.$count(chargers, eq(chargers.workshopId, m.workshop.id))).toBe(1);
	});

	it('replaces the channels on update, and a bad channel leaves the old charger intact', async () => {
		const created = await createCharger(owner, { ...twoChannels(), name: 'Replace me' });
		if (!created.ok) throw new Error(created.message);
		const id = created.charger.id;
		const updated = await updateCharger(owner, id, {
			name: 'Replaced',
			kind: 'bench-supply',
			notes: '',
			channels: [{ name: 'Out', maxVolts: 30, maxAmps: 5, maxWatts: 150 }]
		});
		expect(updated.ok).toBe(true);
		const after = await getCharger(owner, id);
		expect(after.name).toBe('Replaced');
		expect(after.channels.map((c) => [c.name, c.maxVolts, c.maxAmps, c.maxWatts])).toEqual([['Out', 30, 5, 150]]);
		expect(await db.$count(chargerChannels, eq(chargerChannels.chargerId, id))).toBe(1);

		// The database refuses a negative voltage after the old channels were deleted in the transaction.
		const bad = {
			name: 'Half written',
			kind: 'multi-channel',
			notes: '',
			channels: [
				{ name: 'A', maxVolts: 12, maxAmps: 2 },
				{ name: 'B', maxVolts: -5, maxAmps: 2 }
			]
		} as ChargerInput;
		await expect(updateCharger(owner, id, bad)).rejects.toThrow();
		const unchanged = await getCharger(owner, id);
		expect(unchanged.name).toBe('Replaced');
		expect(unchanged.kind).toBe('bench-supply');
		expect(unchanged.channels).toEqual(after.channels);
	});

	it('deletes a charger with its channels', async () => {
		const created = await createCharger(owner, { ...twoChannels(), name: 'Short-lived' });
		if (!created.ok) throw new Error(created.message);
		expect(await deleteCharger(owner, created.charger.id)).toEqual({ ok: true });
		expect(await db.$count(chargerChannels, eq(chargerChannels.chargerId, created.charger.id))).toBe(0);
		await expect(getCharger(owner, created.charger.id)).rejects.toMatchObject({ status: 404 });
	});

	it('lets a technician list but not change; a viewer sees none', async () => {
		const created = await createCharger(owner, { ...twoChannels(), name: 'For the roles' });
		if (!created.ok) throw new Error(created.message);
		const tech = await joinAs(owner, 'technician');
		const builder = await joinAs(owner, 'builder');
		const viewer = await joinAs(owner, 'viewer');

		expect((await listChargers(tech)).map((c) => c.name)).toContain('For the roles');
		await expect(createCharger(tech, { ...twoChannels(), name: 'By tech' })).rejects.toMatchObject({ status: 403 });
		await expect(updateCharger(tech, created.charger.id, twoChannels())).rejects.toMatchObject({ status: 403 });
		await expect(deleteCharger(tech, created.charger.id)).rejects.toMatchObject({ status: 403 });
		expect(await db.$count(chargers, eq(chargers.name, 'By tech'))).toBe(0);

		expect((await createCharger(builder, { ...twoChannels(), name: 'By builder' })).ok).toBe(true);

		await expect(listChargers(viewer)).rejects.toMatchObject({ status: 403 });
		await expect(getCharger(viewer, created.charger.id)).rejects.toMatchObject({ status: 403 });
	});

	it("answers 404 for another workshop's charger and leaves it alone", async () => {
		const created = await createCharger(owner, { ...twoChannels(), name: 'Not yours' });
		if (!created.ok) throw new Error(created.message);
		const stranger = await newOwner('stranger');
		await expect(getCharger(stranger, created.charger.id)).rejects.toMatchObject({ status: 404 });
		await expect(updateCharger(stranger, created.charger.id, { ...twoChannels(), name: 'Taken over' })).rejects.toMatchObject({
			status: 404
		});
		await expect(deleteCharger(stranger, created.charger.id)).rejects.toMatchObject({ status: 404 });
		expect(await listChargers(stranger)).toEqual([]);
		const still = await getCharger(owner, created.charger.id);
		expect([still.name, still.channels.length]).toEqual(['Not yours', 2]);
	});

	it('loads the demo chargers into a workshop', async () => {
		const m = await newOwner('demo');
		await db.transaction((tx) => loadDemoChargers(tx, m.workshop.id, m.user.id));
		const listed = await listChargers(m);
		expect(listed.map((c) => [c.kind, c.channels.length])).toEqual(
			expect.arrayContaining([
				['bench-supply', 1],
				['multi-channel', 4],
				['pack-charger', 1]
			])
		);
		expect(listed).toHaveLength(3);
		const bench = listed.find((c) => c.kind === 'bench-supply')!;
		expect(bench.channels[0]).toMatchObject({ maxVolts: 30, maxAmps: 5, maxWatts: 150 });
		const hobby = listed.find((c) => c.kind === 'multi-channel')!;
		expect(hobby.channels.every((c) => c.maxAmps === 8 && c.maxWatts === 100 && c.balanceAmps === 0.3 && c.maxSeriesCells === 6)).toBe(
			true
		);
		expect(hobby.notes).toContain('400 W');
		expect(listed.find((c) => c.kind === 'pack-charger')!.channels[0]).toMatchObject({ maxVolts: 54.6, maxAmps: 5 });
	});
});

describe('the chargers endpoint', () => {
	type Event = Parameters<typeof api.POST>[0];
	let owner: Member;
	beforeAll(async () => {
		owner = await newOwner('api');
	});

	function event(workshopOf: Member, who: Member | null, init: { method?: string; body?: string } = {}) {
		const slug = workshopOf.workshop.slug;
		return apiEvent<Event>(who, `/api/w/${slug}/chargers`, { workshop: slug }, init);
	}

	it('creates with 201 and lists what it created', async () => {
		const posted = await api.POST(event(owner, owner, { method: 'POST', body: JSON.stringify(twoChannels()) }));
		expect(posted.status).toBe(201);
		const { charger } = (await posted.json()) as { charger: { id: string; channels: { maxVolts: number }[] } };
		expect(charger.channels.map((c) => c.maxVolts)).toEqual([25.2, 16.8]);

		const listed = await api.GET(event(owner, owner));
		expect(listed.status).toBe(200);
		const body = (await listed.json()) as { chargers: { id: string; channels: unknown[] }[] };
		expect(body.chargers.map((c) => [c.id, c.channels.length])).toEqual([[charger.id, 2]]);

		const again = await api.POST(event(owner, owner, { method: 'POST', body: JSON.stringify(twoChannels()) }));
		expect(again.status).toBe(409);
	});

	it('answers 400 with the problems in plain words', async () => {
		const body = { name: '', kind: 'toaster', channels: [{ maxVolts: 0, maxAmps: 'lots' }] };
		const posted = await api.POST(event(owner, owner, { method: 'POST', body: JSON.stringify(body) }));
		expect(posted.status).toBe(400);
		const { errors } = (await posted.json()) as { errors: { path: string; message: string }[] };
		expect(errors).toEqual(
			expect.arrayContaining([
				{ path: 'name', message: 'Name the charger.' },
				{ path: 'kind', message: 'Choose what kind of charger it is.' },
				{ path: 'channels.0.maxVolts', message: 'The maximum voltage must be more than 0 V.' },
				{ path: 'channels.0.maxAmps', message: 'Enter the highest current this channel gives, in amps.' }
			])
		);
		const broken = await api.POST(event(owner, owner, { method: 'POST', body: '{not json' }));
		expect(broken.status).toBe(400);
	});

	it('answers 401 without a session, 403 to a viewer or a technician posting, 404 to a stranger', async () => {
		await expect(api.GET(event(owner, null))).rejects.toMatchObject({ status: 401 });
		const viewer = await joinAs(owner, 'viewer');
		await expect(api.GET(event(owner, viewer))).rejects.toMatchObject({ status: 403 });
		const tech = await joinAs(owner, 'technician');
		expect((await api.GET(event(owner, tech))).status).toBe(200);
		await expect(
			api.POST(event(owner, tech, { method: 'POST', body: JSON.stringify({ ...twoChannels(), name: 'Tech API' }) }))
		).rejects.toMatchObject({ status: 403 });
		const stranger = await newOwner('api-stranger');
		await expect(api.GET(event(owner, stranger))).rejects.toMatchObject({ status: 404 });
	});
});

const lfpProfile = (name: string): ChemistryProfileInput => ({
	name,
	family: 'lfp',
	minVolts: 2.5,
	fullDischargeVolts: 2.5,
	nominalVolts: 3.2,
	maxChargeVolts: 3.65,
	storageVolts: 3.3,
	chargeTempMinC: 0,
	chargeTempMaxC: 55,
	dischargeTempMinC: -20,
	dischargeTempMaxC: 55,
	defaultChargeC: 0.5,
	terminationC: 0.05,
	cvShareAt1C: 0.2,
	restCurve: [
		{ socPercent: 0, volts: 2.5 },
		{ socPercent: 10, volts: 3.2 },
		{ socPercent: 50, volts: 3.29 },
		{ socPercent: 100, volts: 3.45 }
	],
	source: 'Maker datasheet rev. B, page 3',
	// 55 °C is past the usual 45 °C charging limit (BU-410): the datasheet is confirmed to allow it.
	datasheetAllows: true
});

describe('chemistry profiles', () => {
	let owner: Member;
	beforeAll(async () => {
		owner = await newOwner('chem');
	});

	it('creates and updates a profile, storing state of charge as 0..1', async () => {
		const created = await createChemistryProfile(owner, lfpProfile('Prismatic LFP'));
		if (!created.ok) throw new Error(created.message);
		expect(created.profile.restCurve).toEqual([
			[0, 2.5],
			[0.1, 3.2],
			[0.5, 3.29],
			[1, 3.45]
		]);
		expect(created.profile).toMatchObject({ family: 'lfp', createdBy: owner.user.id, source: 'Maker datasheet rev. B, page 3' });

		const updated = await updateChemistryProfile(owner, created.profile.id, {
			...lfpProfile('Prismatic LFP, rev. C'),
			maxChargeVolts: 3.6
		});
		expect(updated.ok).toBe(true);
		const read = await getChemistryProfile(owner, created.profile.id);
		expect([read.name, read.maxChargeVolts, read.updatedByName]).toEqual(['Prismatic LFP, rev. C', 3.6, owner.user.name]);

		const chemistry = await resolveChemistryRef(owner, { chemistryProfileId: created.profile.id });
		expect(chemistry).toMatchObject({ id: created.profile.id, maxChargeVolts: 3.6, family: 'lfp', restCurveApproximate: false });
		expect(chemistry.chargeTempC).toEqual({ min: 0, max: 55 });
		expect(await resolveChemistryRef(owner, { chemistryId: 'lfp' })).toBe(chemistries.lfp);
	});

	it('refuses a curve the engine cannot use, and saves nothing', async () => {
		const bad = {
			...lfpProfile('Backwards curve'),
			restCurve: [
				{ socPercent: 0, volts: 2.5 },
				{ socPercent: 60, volts: 3.3 },
				{ socPercent: 40, volts: 3.35 }
			]
		};
		const result = await createChemistryProfile(owner, bad);
		expect(result).toMatchObject({ ok: false, reason: 'invalid-chemistry' });
		if (!result.ok) expect(result.message).toMatch(/rest-voltage table/i);
		const names = (await listChemistries(owner)).map((c) => c.name);
		expect(names).not.toContain('Backwards curve');

		const good = await createChemistryProfile(owner, lfpProfile('Will stay good'));
		if (!good.ok) throw new Error(good.message);
		expect(await updateChemistryProfile(owner, good.profile.id, { ...bad, name: 'Will stay good' })).toMatchObject({
			ok: false,
			reason: 'invalid-chemistry'
		});
		expect((await getChemistryProfile(owner, good.profile.id)).restCurve).toHaveLength(4);
	});

	it('lists the built-ins first, marked, then the workshop’s own with their use', async () => {
		const m = await newOwner('chem-list');
		const created = await createChemistryProfile(m, lfpProfile('Own cell'));
		if (!created.ok) throw new Error(created.message);
		const list = await listChemistries(m);
		expect(list.filter((c) => c.isBuiltIn).map((c) => [c.id, c.restCurveApproximate])).toEqual([
			['nmc', false],
			['nca', false],
			['lco', true],
			['lmo', true],
			['lfp', false],
			['lto', true]
		]);
		expect(list.filter((c) => !c.isBuiltIn)).toEqual([
			expect.objectContaining({ id: created.profile.id, name: 'Own cell', chemistryProfileId: created.profile.id, usedBySpecs: 0 })
		]);
	});

	it('refuses to delete a profile while a cell spec uses it', async () => {
		const created = await createChemistryProfile(owner, lfpProfile('In use'));
		if (!created.ok) throw new Error(created.message);
		const specId = newId();
		await db.insert(cellSpecs).values({
			id: specId,
			workshopId: owner.workshop.id,
			name: 'Prismatic 105 Ah',
			chemistryProfileId: created.profile.id,
			capacityAh: 105,
			maxContinuousAmps: 105,
			maxChargeAmps: 52.5
		});
		const refused = await deleteChemistryProfile(owner, created.profile.id);
		expect(refused).toMatchObject({ ok: false, reason: 'in-use' });
		if (!refused.ok) expect(refused.message).toContain('Prismatic 105 Ah');
		expect((await getChemistryProfile(owner, created.profile.id)).usedBySpecs).toEqual(['Prismatic 105 Ah']);
		expect((await listChemistries(owner)).find((c) => c.id === created.profile.id)?.usedBySpecs).toBe(1);

		await db.delete(cellSpecs).where(and(eq(cellSpecs.id, specId), eq(cellSpecs.workshopId, owner.workshop.id)));
		expect(await deleteChemistryProfile(owner, created.profile.id)).toEqual({ ok: true });
		await expect(getChemistryProfile(owner, created.profile.id)).rejects.toMatchObject({ status: 404 });
	});

	it('keeps profiles to their workshop and to the roles that may edit them', async () => {
		const created = await createChemistryProfile(owner, lfpProfile('Private'));
		if (!created.ok) throw new Error(created.message);
		const stranger = await newOwner('chem-stranger');
		await expect(getChemistryProfile(stranger, created.profile.id)).rejects.toMatchObject({ status: 404 });
		await expect(resolveChemistryRef(stranger, { chemistryProfileId: created.profile.id })).rejects.toMatchObject({ status: 404 });
		await expect(updateChemistryProfile(stranger, created.profile.id, lfpProfile('Mine now'))).rejects.toMatchObject({ status: 404 });
		await expect(deleteChemistryProfile(stranger, created.profile.id)).rejects.toMatchObject({ status: 404 });
		expect((await listChemistries(stranger)).some((c) => c.id === created.profile.id)).toBe(false);

		const tech = await joinAs(owner, 'technician');
		expect((await listChemistries(tech)).some((c) => c.id === created.profile.id)).toBe(true);
		await expect(createChemistryProfile(tech, lfpProfile('By tech'))).rejects.toMatchObject({ status: 403 });
		const viewer = await joinAs(owner, 'viewer');
		await expect(listChemistries(viewer)).rejects.toMatchObject({ status: 403 });
		expect((await getChemistryProfile(owner, created.profile.id)).name).toBe('Private');
	});
});

/** A chemistry profile past its family's usual limits is saved only with the datasheet confirmed. */
import { beforeAll, describe, expect, it } from 'vitest';
import type { Member } from '$lib/server/auth/permissions';
import { createChemistryProfile, listChemistries, updateChemistryProfile } from '$lib/server/chemistry-profiles';
import type { ChemistryProfileInput } from '$lib/schemas/chemistry';
import { memberOf, signUpOwner } from './helpers';

// A 4.2 V-family profile inside the usual limits: 4.20 V full charge, 0.5C (BU-216), charging
// 0–45 °C (BU-410). The rest curve is the NMC 21700 table of references.md §2 (first, middle, last).
const usual = (name: string): ChemistryProfileInput => ({
	name,
	family: 'li-ion',
	minVolts: 2.5,
	fullDischargeVolts: 3.0,
	nominalVolts: 3.6,
	maxChargeVolts: 4.2,
	storageVolts: 3.7,
	chargeTempMinC: 0,
	chargeTempMaxC: 45,
	dischargeTempMinC: -20,
	dischargeTempMaxC: 60,
	defaultChargeC: 0.5,
	terminationC: 0.05,
	cvShareAt1C: 0.25,
	restCurve: [
		{ socPercent: 0, volts: 2.5 },
		{ socPercent: 45.23, volts: 3.6941 },
		{ socPercent: 100, volts: 4.2 }
	],
	source: 'Test cell datasheet'
});

describe('chemistry profiles past the usual limits', () => {
	let owner: Member;
	beforeAll(async () => {
		const person = await signUpOwner('chem-datasheet');
		owner = await memberOf(person.userId, person.workshopSlug);
	});

	it('saves a profile within the usual limits without asking', async () => {
		expect((await createChemistryProfile(owner, usual('Plain NMC'))).ok).toBe(true);
	});

	it('refuses 4.35 V without the confirmation, names the datasheet, and saves nothing', async () => {
		const result = await createChemistryProfile(owner, { ...usual('High-voltage cell'), maxChargeVolts: 4.35 });
		expect(result).toMatchObject({ ok: false, reason: 'needs-datasheet' });
		if (!result.ok) expect(result.message).toMatch(/4\.350\s?V.*datasheet allows this/s);
		expect((await listChemistries(owner)).map((c) => c.name)).not.toContain('High-voltage cell');

		const confirmed = await createChemistryProfile(owner, { ...usual('High-voltage cell'), maxChargeVolts: 4.35, datasheetAllows: true });
		expect(confirmed.ok).toBe(true);
	});

	it('asks again when an edit charges below 0 °C, and keeps the saved values', async () => {
		const created = await createChemistryProfile(owner, usual('Cold cell'));
		if (!created.ok) throw new Error(created.message);
		const result = await updateChemistryProfile(owner, created.profile.id, { ...usual('Cold cell'), chargeTempMinC: -10 });
		expect(result).toMatchObject({ ok: false, reason: 'needs-datasheet' });
		const kept = (await listChemistries(owner)).find((c) => c.id === created.profile.id);
		expect(kept?.chemistry.chargeTempC.min).toBe(0);
	});
});

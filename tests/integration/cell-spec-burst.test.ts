/** A cell spec's burst rating carries its duration, from the form to the database and back. */
import { describe, expect, it } from 'vitest';
import { createCellSpec, getCellSpec } from '$lib/server/cell-specs';
import { cellSpecSchema } from '$lib/schemas/packs';
import { memberOf, signUpOwner } from './helpers';

// Invented ratings of a 21700 cell: 15 A continuous, 30 A for 10 s.
const spec = { name: 'Burst 21700', chemistry: 'builtin:nmc', capacityAh: 4, maxContinuousAmps: 15, maxBurstAmps: 30, maxChargeAmps: 4, resistanceMilliOhms: null };

describe('burst duration of a cell spec', () => {
	it('keeps the burst duration in seconds', async () => {
		const person = await signUpOwner('burst');
		const owner = await memberOf(person.userId, person.workshopSlug);
		const form = cellSpecSchema.parse({ ...spec, maxBurstSeconds: 10 });
		const created = await createCellSpec(owner, form);
		if (!created.ok) throw new Error(created.message);
		expect((await getCellSpec(owner, created.spec.id)).maxBurstSeconds).toBe(10);
	});

	it.each([
		[{ ...spec, maxBurstSeconds: 0 }, /at least 1 s/],
		[{ ...spec, maxBurstSeconds: 3601 }, /at most 3600 s/],
		[{ ...spec, maxBurstSeconds: 2.5 }, /whole number of seconds/],
		[{ ...spec, maxBurstAmps: null, maxBurstSeconds: 10 }, /burst current too/]
	])('refuses %o in plain words', (input, words) => {
		const result = cellSpecSchema.safeParse(input);
		expect(result.success).toBe(false);
		expect(result.error?.issues.find((i) => i.path[0] === 'maxBurstSeconds')?.message).toMatch(words);
	});
});

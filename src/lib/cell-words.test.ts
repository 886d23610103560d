import { describe, expect, it } from 'vitest';
import { inspectBatch, type CellFlag } from '$lib/engine';
import { cellReasons, verdictWords } from './cell-words';

describe('reasons in words', () => {
	// A healthy NMC batch (3.60 V, 20 mΩ, 3.00 Ah) and one cell per flag.
	const good = ['a', 'b', 'c', 'd'].map((id) => ({ id, volts: 3.6, resistanceMilliOhms: 20, capacityAh: 3.0 }));
	const odd = [
		{ id: 'flat', volts: 2.1, resistanceMilliOhms: 20, capacityAh: 3.0 },
		{ id: 'hot', volts: 3.6, resistanceMilliOhms: 40, capacityAh: 3.0 }
	];
	const inspection = inspectBatch('nmc', [...good, ...odd]);
	if ('ok' in inspection) throw new Error(inspection.reason);
	const reasonsOf = (id: string) => {
		const cell = [...good, ...odd].find((c) => c.id === id)!;
		const flags = inspection.verdicts.find((v) => v.id === id)!.flags as CellFlag[];
		return cellReasons(flags, { arrivalVolts: cell.volts, resistanceMilliOhms: cell.resistanceMilliOhms, capacityAh: cell.capacityAh }, inspection.limits);
	};

	it('an over-discharged cell: the value, the minimum and what to do (the sentence issue 7 asks for)', () => {
		expect(reasonsOf('flat')).toEqual([
			'arrived at 2.10 V, below the 2.50 V minimum: over-discharged — do not charge it; tape its terminals and take it to a recycler'
		]);
	});

	it('a high-resistance cell: its value against the batch median', () => {
		expect(reasonsOf('hot')[0]).toMatch(/^resistance 40\.0 mΩ, 2\.0 × the batch median 20\.0 mΩ/);
	});

	it('no engine code reaches a person', () => {
		for (const text of [...reasonsOf('flat'), ...reasonsOf('hot'), ...Object.values(verdictWords)]) {
			expect(text).not.toMatch(/[a-z]+-[a-z]+-[a-z]+|reject\b|Volts|MilliOhms/);
		}
	});
});

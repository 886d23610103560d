import { describe, expect, it } from 'vitest';
import { checkSelfDischarge, type VoltageCheckItem } from './self-discharge';

const day = (d: number, hour = 12) => new Date(Date.UTC(2026, 2, d, hour));
const item = (id: string, firstVolts: number, secondVolts: number, firstAt = day(1), secondAt = day(5)): VoltageCheckItem => ({
	id,
	label: id,
	firstVolts,
	firstAt,
	secondVolts,
	secondAt
});

describe('checkSelfDischarge', () => {
	/*
	 * Hand-worked table (rule: common practice, no published source; 1.4826 from memory).
	 *
	 *  cell  first V  second V  days  drop mV  mV/day   |dev from median 3|
	 *  A     3.600    3.588     6     12       2.0      1
	 *  B     3.600    3.588     4     12       3.0      0
	 *  C     3.610    3.598     4     12       3.0      0
	 *  D     3.605    3.589     4     16       4.0      1
	 *  E     3.600    3.580     4     20       5.0      2
	 *  T17   3.620    3.536     4     84      21.0     18
	 *  G     3.600    3.604     4     -4      -1.0      4
	 *
	 *  mV/day sorted: -1, 2, 3, 3, 4, 5, 21 → median = 3 (4th of 7)
	 *  deviations sorted: 0, 0, 1, 1, 2, 4, 18 → MAD = 1
	 *  3 × 1.4826 × 1 = 4.45 < floor 5 → threshold = 3 + 5 = 8 mV/day
	 *  T17 (21 > 8) is fast; G rose 4 mV (> 2 mV tolerance): gained; E (5) is with the batch.
	 */
	const table = [
		item('A', 3.6, 3.588, day(1), day(7)),
		item('B', 3.6, 3.588),
		item('C', 3.61, 3.598),
		item('D', 3.605, 3.589),
		item('E', 3.6, 3.58),
		item('T17', 3.62, 3.536),
		item('G', 3.6, 3.604)
	];

	it('flags the cell that loses charge faster than the batch and the one that gained (hand-worked table)', () => {
		const r = checkSelfDischarge(table);
		if (!r.ok) throw new Error(r.detail);
		expect(r.medianMvPerDay).toBeCloseTo(3, 9);
		expect(r.madMvPerDay).toBeCloseTo(1, 9);
		expect(r.thresholdMvPerDay).toBeCloseTo(8, 9);
		expect(r.fast.map((f) => f.id)).toEqual(['T17']);
		expect(r.fast[0].dropMvPerDay).toBeCloseTo(21, 9);
		expect(r.gained.map((g) => g.id)).toEqual(['G']);
		expect(r.gained[0].dropMv).toBeCloseTo(-4, 9);
		const a = r.items.find((i) => i.id === 'A')!;
		expect(a.days).toBeCloseTo(6, 9);
		expect(a.dropMvPerDay).toBeCloseTo(2, 9);
		expect(r.items.find((i) => i.id === 'E')!.flag).toBeNull();
		expect(r.items.map((i) => i.id)).toEqual(['A', 'B', 'C', 'D', 'E', 'T17', 'G']);
	});

	/*
	 * A spread batch, every gap 5 days:
	 *  drop mV:  0, 50, 100, 100, 150, 200, 500  → mV/day 0, 10, 20, 20, 30, 40, 100
	 *  median 20; deviations 20, 10, 0, 0, 10, 20, 80 → sorted 0, 0, 10, 10, 20, 20, 80 → MAD 10
	 *  3 × 1.4826 × 10 = 44.478 > floor 5 → threshold 64.478: only the 100 mV/day cell is fast.
	 */
	it('uses the robust spread when it is wider than the floor (hand-worked)', () => {
		const volts = [3.6, 3.55, 3.5, 3.5, 3.45, 3.4, 3.1];
		const r = checkSelfDischarge(volts.map((v, i) => item(`C${i + 1}`, 3.6, v, day(1), day(6))));
		if (!r.ok) throw new Error(r.detail);
		expect(r.medianMvPerDay).toBeCloseTo(20, 6);
		expect(r.madMvPerDay).toBeCloseTo(10, 6);
		expect(r.thresholdMvPerDay).toBeCloseTo(64.478, 6);
		expect(r.fast.map((f) => f.id)).toEqual(['C7']);
		expect(r.gained).toEqual([]);
	});

	/*
	 * Even count, six cells over 4 days: mV/day 1, 2, 3, 5, 6, 30 → median (3 + 5) / 2 = 4;
	 * deviations 3, 2, 1, 1, 2, 26 → sorted 1, 1, 2, 2, 3, 26 → MAD 2;
	 * 3 × 1.4826 × 2 = 8.8956 → threshold 12.8956: the 30 mV/day cell only.
	 */
	it('takes the mean of the two middle values for an even batch (hand-worked)', () => {
		const drops = [4, 8, 12, 20, 24, 120];
		const r = checkSelfDischarge(drops.map((d, i) => item(`C${i + 1}`, 3.6, 3.6 - d / 1000)));
		if (!r.ok) throw new Error(r.detail);
		expect(r.medianMvPerDay).toBeCloseTo(4, 6);
		expect(r.madMvPerDay).toBeCloseTo(2, 6);
		expect(r.thresholdMvPerDay).toBeCloseTo(12.8956, 6);
		expect(r.fast.map((f) => f.id)).toEqual(['C6']);
	});

	it('flags nothing in an even batch', () => {
		const r = checkSelfDischarge(['A', 'B', 'C', 'D', 'E'].map((id) => item(id, 3.6, 3.592)));
		if (!r.ok) throw new Error(r.detail);
		expect(r.fast).toEqual([]);
		expect(r.gained).toEqual([]);
		expect(r.madMvPerDay).toBe(0);
	});

	it.each([
		['too-few-items', table.slice(0, 4), /at least 5 cells or groups/],
		['too-soon', [...table.slice(0, 6), item('late', 3.6, 3.59, day(1, 12), day(3, 18))], /late.*Wait at least 3 days at rest/],
		['times-out-of-order', [...table.slice(0, 6), item('back', 3.6, 3.59, day(5), day(1))], /back: the second measure is not later/],
		['invalid-volts', [...table.slice(0, 6), item('odd', 36, 3.59)], /odd: 36 is not a cell voltage/],
		['invalid-time', [...table.slice(0, 6), item('bad', 3.6, 3.59, new Date('nope'))], /bad: a measure has no valid time/],
		['duplicate-item', [...table.slice(0, 6), item('B', 3.6, 3.59)], /B is given twice/]
	])('fails with %s in plain words', (reason, items, words) => {
		const r = checkSelfDischarge(items);
		expect(r.ok).toBe(false);
		if (r.ok) return;
		expect(r.reason).toBe(reason);
		expect(r.detail).toMatch(words);
	});

	it('takes its thresholds from the options', () => {
		const r = checkSelfDischarge(table.slice(0, 3), { minItems: 3, minDays: 7 });
		expect(r.ok).toBe(false);
		if (!r.ok) expect(r.reason).toBe('too-soon');
	});
});

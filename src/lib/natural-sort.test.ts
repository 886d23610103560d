import { describe, expect, it } from 'vitest';
import { compareLabels, sortByLabel } from './natural-sort';

describe('natural label order', () => {
	it('counts numbers as numbers: C2 before C10 (a list written out by hand)', () => {
		const labels = ['C10', 'C2', 'c3', 'C1', 'B12', 'C2a', 'B2', 'T100', 'T099', 'C20'];
		expect([...labels].sort(compareLabels)).toEqual(['B2', 'B12', 'C1', 'C2', 'C2a', 'c3', 'C10', 'C20', 'T099', 'T100']);
	});

	it('sorts records by label and leaves the input alone', () => {
		const input = [{ label: 'A10' }, { label: 'A9' }];
		expect(sortByLabel(input).map((c) => c.label)).toEqual(['A9', 'A10']);
		expect(input[0].label).toBe('A10');
	});

	it('is a total order: labels equal but for case still compare unequal', () => {
		expect(compareLabels('c1', 'C1')).not.toBe(0);
		expect(Math.sign(compareLabels('c1', 'C1'))).toBe(-Math.sign(compareLabels('C1', 'c1')));
	});
});

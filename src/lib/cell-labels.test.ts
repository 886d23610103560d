import { describe, expect, it } from 'vitest';
import { followingLabel, nextLabel } from './cell-labels';

describe('cell labels', () => {
	it.each([
		['C9', 'C10'],
		['T056', 'T057'],
		['A099', 'A100'],
		['B-12', 'B-13'],
		['X', '']
	])('%s → %s', (label, next) => {
		expect(followingLabel(label)).toBe(next);
	});

	it('carries on from the highest number of the batch', () => {
		expect(nextLabel(['C2', 'C10', 'A3', 'spare'])).toBe('C11');
		expect(nextLabel([])).toBe('C1');
		expect(nextLabel(['odd one'])).toBe('C1');
	});
});

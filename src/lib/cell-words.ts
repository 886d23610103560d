/** Plain words for the engine's inspection results (shared by pages and tests). */
import type { CellFlag, CellVerdict } from '$lib/engine';

export const verdictWords: Record<CellVerdict['verdict'], string> = {
	ok: 'ok',
	suspect: 'suspect',
	reject: 'reject'
};

export const flagWords: Record<CellFlag, string> = {
	'below-reject-volts': 'arrived below 2.0 V: discard it',
	'above-max-volts': 'above the charge limit: do not use',
	'low-volts': 'more than 100 mV below the batch',
	'high-resistance': 'resistance over 1.5 × the batch median',
	'low-capacity': 'capacity more than 5 % under the batch median',
	'missing-volts': 'no voltage measured'
};

export const placementWords = {
	unsorted: 'not placed',
	group: 'in a group',
	spare: 'spare',
	rejected: 'set aside'
} as const;

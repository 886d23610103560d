import { describe, expect, it } from 'vitest';
import { chemistries, resolveChemistry, type Chemistry } from '$lib/engine';
import { plainEngineMessage } from './engine-words';

// Broken profiles, one fault each, so that every chemistry refusal the engine can give is seen.
const nmc = chemistries.nmc;
const broken: [string, Chemistry][] = [
	['voltages out of order', { ...nmc, nominalVolts: 4.3 }],
	['a rate of 0', { ...nmc, defaultChargeC: 0 }],
	['a CV share of 1', { ...nmc, cvShareAt1C: 1 }],
	['a taper of 0', { ...nmc, cvTaperFactor: 0 }],
	['a reversed temperature window', { ...nmc, chargeTempC: { min: 45, max: 0 } }],
	['a one-point curve', { ...nmc, restCurve: [[0, 3]] }],
	['a curve point out of range', { ...nmc, restCurve: [[0, 3], [1.5, 4.2]] }],
	['a falling curve', { ...nmc, restCurve: [[0, 3.5], [0.5, 3.4], [1, 4.2]] }]
];

describe('plainEngineMessage', () => {
	it.each(broken)('puts the engine’s refusal of %s into the form’s words', (_, chemistry) => {
		const failure = resolveChemistry(chemistry);
		if (!('ok' in failure)) throw new Error('the engine accepted a broken profile');
		const text = plainEngineMessage(failure);
		// No engine field name (camelCase such as cvShareAt1C, maxAmps) and no "soc" shorthand.
		expect(text).not.toMatch(/\b[a-z]+[A-Z]\w*\b/);
		expect(text).not.toMatch(/\bsoc\b/i);
		expect(text.length).toBeGreaterThan(10);
	});

	it('names the fields as the forms label them', () => {
		expect(plainEngineMessage({ reason: 'invalid-chemistry', detail: 'cvShareAt1C must be at least 0 and below 1.' })).toBe(
			'The share charged in CV at 1C must be at least 0 and below 1.'
		);
		expect(plainEngineMessage({ reason: 'invalid-channel', detail: 'The channel needs a positive maxAmps.' })).toBe(
			'The channel needs a positive maximum current.'
		);
	});

	it('says something plain when the engine gave no detail', () => {
		expect(plainEngineMessage({ reason: 'invalid-input' })).toMatch(/datasheet/);
	});
});

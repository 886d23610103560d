import { describe, expect, it } from 'vitest';
import { demoPackNotes } from '$lib/server/demo/packs';
import { unwatchedChargeSentences } from './safety-wording';

describe('unwatchedChargeSentences', () => {
	it.each([
		'Cellsitter guides the lead swaps through the night.',
		'Let it charge overnight and check it in the morning.',
		'Charging while you sleep is simple with alerts.',
		'The pack can charge unattended on the bench.'
	])('finds a night or unattended charge with nobody awake: %s', (text) => {
		expect(unwatchedChargeSentences(text)).toEqual([text]);
	});

	it.each([
		'The charge ran overnight with the technician awake on a night watch.',
		'Never charge while asleep or away.',
		'Someone stays awake and present at the bench for the whole charge, night included.'
	])('accepts a sentence that keeps someone awake and present: %s', (text) => {
		expect(unwatchedChargeSentences(text)).toEqual([]);
	});
});

describe('the demo pack notes (demo-scenario.md: a night watch is a hands-on window)', () => {
	it.each(Object.entries(demoPackNotes))('%s never describes a charge left alone', (_, notes) => {
		expect(unwatchedChargeSentences(notes)).toEqual([]);
	});
});

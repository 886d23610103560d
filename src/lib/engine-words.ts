/**
 * The engine's failures in the words of the screens (client-safe). The engine names its own fields
 * (cvShareAt1C, maxAmps, soc 0..1): those names never reach a person's message.
 */
import type { Failure } from '$lib/engine';

// Engine sentences and field names → the labels the forms use: whole sentences first, then the
// names left inside others.
const fieldWords: [RegExp, string][] = [
	[/^Rest curve point (\d+) must be \[soc 0\.\.1, volts > 0\]/, 'Row $1 of the rest-voltage table needs a state of charge from 0 to 100 % and a voltage above 0 V'],
	[/^Rest curve soc must rise and its volts never fall/, 'In the rest-voltage table the state of charge must rise from row to row and the voltage never fall'],
	[/\[soc 0\.\.1, volts > 0\]/g, 'a state of charge from 0 to 100 % and a voltage above 0 V'],
	[/\brest curve\b/gi, 'rest-voltage table'],
	[/\bcvShareAt1C\b/g, 'the share charged in CV at 1C'],
	[/\bcvTaperFactor\b/g, 'the CV taper'],
	[/\bmaxWatts\b/g, 'power limit'],
	[/\bmaxAmps\b/g, 'maximum current'],
	[/\bmaxVolts\b/g, 'maximum voltage'],
	[/\bperGroup\b/g, 'cells per group'],
	[/\bsoc\b/g, 'state of charge'],
	[/\bvolts\b/g, 'voltage'],
	[/ ≥ /g, ' of at least '],
	[/: minimum ≤ full discharge < nominal < maximum charge/g, ' from the absolute minimum through the discharge cut-off and the nominal voltage to the maximum charge voltage'],
	[/\ba finite min below max\b/g, 'a lowest value below the highest']
];

/** A failure's detail with the engine's field names put into words, or a plain fallback. */
export function plainEngineMessage(failure: Pick<Failure, 'reason' | 'detail'>): string {
	const detail = typeof failure.detail === 'string' ? failure.detail.trim() : '';
	if (!detail) return 'These values cannot be used. Check them against the cell maker’s datasheet.';
	let text = detail;
	for (const [pattern, words] of fieldWords) text = text.replace(pattern, words);
	return text.charAt(0).toUpperCase() + text.slice(1);
}

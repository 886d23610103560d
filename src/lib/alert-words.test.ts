import { describe, expect, it } from 'vitest';
import { ALERT_KINDS } from '$lib/server/db/schema/alerts';
import { unwatchedChargeSentences } from '$lib/safety-wording';
import { ALERT_WORD_KINDS, FIRE_LINE, alertAction, alertTitle, alertUnit, formatAlertValue, severityWord } from './alert-words';

const SEVERITIES = ['info', 'warning', 'critical'] as const;
const THIN = '\u2009';
// Written out here so a changed or missing title shows up.
const TITLES: Record<string, string> = {
	'over-voltage': 'over voltage',
	'under-voltage': 'under voltage',
	'over-temperature': 'over temperature',
	'cold-charge': 'charging too cold',
	'heat-rise': 'heating up fast',
	drift: 'apart from the other groups',
	'reading-overdue': 'reading overdue',
	'step-overrun': 'step running long',
	'step-finished': 'step finished',
	'session-drift': 'drifting since the last charge'
};
const every = ALERT_WORD_KINDS.flatMap((kind) => SEVERITIES.map((severity) => [kind, severity] as const));

describe('alert words', () => {
	it('cover exactly the kinds the alerts table stores', () => {
		expect([...ALERT_WORD_KINDS].sort()).toEqual([...ALERT_KINDS].sort());
	});

	it.each(every)('%s / %s: a title of its own and an action that says what to do', (kind, severity) => {
		expect(alertTitle(kind, '7')).toBe(`Group 7: ${TITLES[kind]}`);
		const action = alertAction(kind, severity, '7');
		expect(action).toMatch(/^[A-Z].*\.$/);
		expect(action).not.toMatch(/!/);
		expect(action).toMatch(/group 7/);
		// references.md §8: never charge while asleep or away — no sentence may suggest it.
		expect(unwatchedChargeSentences(action)).toEqual([]);
	});

	it.each(ALERT_WORD_KINDS)('%s / critical: disconnect the charger from the group now, then the fire line (references.md §8)', (kind) => {
		const action = alertAction(kind, 'critical', '7');
		expect(action.startsWith('Disconnect the charger from group 7 now.')).toBe(true);
		expect(action.endsWith('If there is smoke or flame, get out, keep out and call the fire service.')).toBe(true);
		expect(alertAction(kind, 'critical', null).startsWith('Disconnect the charger from the pack now.')).toBe(true);
	});

	it('the brief’s examples, word for word', () => {
		expect(alertTitle('over-voltage', '7')).toBe('Group 7: over voltage');
		expect(alertTitle('reading-overdue', null)).toBe('Reading overdue');
		expect(alertAction('over-voltage', 'critical', '7')).toBe(
			'Disconnect the charger from group 7 now. Keep clear of it, and do not charge it again until it has been checked for heat and swelling. If there is smoke or flame, get out, keep out and call the fire service.'
		);
		expect(alertAction('reading-overdue', 'warning', null)).toBe('Someone should look at the pack now and log its voltages and temperatures.');
		expect(FIRE_LINE).toBe('If there is smoke or flame, get out, keep out and call the fire service.');
	});

	it('titles differ between kinds (a list of alerts can tell them apart)', () => {
		const titles = ALERT_WORD_KINDS.map((k) => alertTitle(k, null));
		expect(new Set(titles).size).toBe(titles.length);
	});

	it('an unknown kind still gets words, never a throw', () => {
		expect(alertTitle('new-thing', '2')).toBe('Group 2: new thing');
		expect(alertAction('new-thing', 'warning', '2')).toBe('Look at group 2 now and check its readings against the limits.');
		expect(alertAction('new-thing', 'critical', '2')).toContain(FIRE_LINE);
	});

	it('state words from look.md: warning → watch, critical → act now', () => {
		expect(severityWord('warning')).toBe('watch');
		expect(severityWord('critical')).toBe('act now');
		expect(severityWord('info')).toBe('note');
	});
});

describe('units and values', () => {
	it.each([
		['over-voltage', 'V'],
		['under-voltage', 'V'],
		['over-temperature', '°C'],
		['cold-charge', '°C'],
		['heat-rise', '°C/min'],
		['drift', 'V'],
		['session-drift', 'V'],
		['reading-overdue', 'min'],
		['step-overrun', 'h'],
		['step-finished', 'A']
	])('%s is in %s (limits.ts: the unit of its limit)', (kind, unit) => {
		expect(alertUnit(kind)).toBe(unit);
	});

	it('heat rise above the room is in °C, told apart by its threshold', () => {
		const limits = { heatRiseCPerMinute: 1, heatAboveAmbientC: 10 };
		expect(alertUnit('heat-rise', { threshold: 10, limits })).toBe('°C');
		expect(alertUnit('heat-rise', { threshold: 1, limits })).toBe('°C/min');
		// Equal limits cannot be told apart: the rate.
		expect(alertUnit('heat-rise', { threshold: 5, limits: { heatRiseCPerMinute: 5, heatAboveAmbientC: 5 } })).toBe('°C/min');
	});

	it.each([
		['over-voltage', 4.31, `4.310${THIN}V`],
		['over-temperature', 61, `61${THIN}°C`],
		['over-temperature', 60.5, `60.5${THIN}°C`],
		['cold-charge', -2, `\u22122${THIN}°C`],
		['heat-rise', 8 / 6, `1.3${THIN}°C/min`],
		['drift', 0.04, `40${THIN}mV`],
		['session-drift', -0.025, `\u221225${THIN}mV`],
		['reading-overdue', 76, `1${THIN}h 16${THIN}min`],
		['step-overrun', 4.5, `4${THIN}h 30${THIN}min`],
		['step-finished', 0.15, `0.15${THIN}A`],
		['over-voltage', Number.NaN, '—']
	])('%s %f → %s (look.md: volts to 3 decimals, a thin space before the unit)', (kind, value, text) => {
		expect(formatAlertValue(kind, value)).toBe(text);
	});

	it('a heat rise above the room formats as degrees when told its unit', () => {
		expect(formatAlertValue('heat-rise', 14, '°C')).toBe(`14${THIN}°C`);
	});
});

import { describe, expect, it } from 'vitest';
import {
	dueText,
	formatClock,
	formatHours,
	formatMilliVolts,
	formatSetAmps,
	formatTemp,
	formatVolts,
	parseTyped,
	readAtText,
	stepInstruction,
	waitingText
} from './run-words';

// Expected strings written out by hand; \u2009 is the thin space look.md puts before a unit.
describe('numbers as the bench reads them', () => {
	it.each([
		[4.1824, '4.182\u2009V'],
		[3.6, '3.600\u2009V'],
		[0, '0.000\u2009V']
	])('volts %s → %s', (v, text) => expect(formatVolts(v)).toBe(text));

	it.each([
		[12.4, '+12\u2009mV'],
		[-3.2, '\u22123\u2009mV'],
		[0.3, '0\u2009mV'],
		[-0.4, '0\u2009mV']
	])('difference %s mV → %s', (mv, text) => expect(formatMilliVolts(mv)).toBe(text));

	it.each([
		[31.4, '31\u2009°C'],
		[-4.6, '\u22125\u2009°C']
	])('temperature %s → %s', (t, text) => expect(formatTemp(t)).toBe(text));

	it.each([
		[10, '10\u2009A'],
		[2.5, '2.5\u2009A'],
		[0.125, '0.13\u2009A']
	])('set amps %s → %s', (a, text) => expect(formatSetAmps(a)).toBe(text));

	it.each([
		[2.25, '2\u2009h 15\u2009min'],
		[0.75, '45\u2009min'],
		[3, '3\u2009h'],
		[0.005, 'under a minute'],
		// 1 h 59.7 min rounds to 2 h, not "1 h 60 min"
		[1.995, '2\u2009h']
	])('%s hours → %s', (h, text) => expect(formatHours(h)).toBe(text));
});

describe('step instructions', () => {
	it('says where the leads go and what to set', () => {
		const step = { groupIndex: 5, role: 'charge', setVolts: 4.2, amps: 10, channelLabel: 'Channel 1' };
		expect(stepInstruction(step, { move: true, showChannel: false })).toBe(
			'Move the leads to group 5, set 4.20\u2009V and 10\u2009A'
		);
		expect(stepInstruction(step, { move: false, showChannel: false })).toBe(
			'Connect the leads to group 5, set 4.20\u2009V and 10\u2009A'
		);
		expect(stepInstruction(step, { move: true, showChannel: true })).toBe(
			'Channel 1: move the leads to group 5, set 4.20\u2009V and 10\u2009A'
		);
	});

	it('names the whole pack for a pack charge', () => {
		const step = { groupIndex: null, role: 'charge', setVolts: 54.6, amps: 5, channelLabel: '' };
		expect(stepInstruction(step, { move: false, showChannel: false })).toBe(
			'Connect the charger to the whole pack, set 54.60\u2009V and 5\u2009A'
		);
	});
});

describe('waiting and due', () => {
	it('counts what is waiting', () => {
		expect(waitingText(0, false)).toBe('');
		expect(waitingText(1, false)).toBe('1 reading waiting to send — they will go when the connection is back.');
		expect(waitingText(2, true)).toBe('2 readings waiting to send — sending now.');
	});

	it('says when the next reading is due', () => {
		const now = new Date('2026-03-01T10:00:00Z');
		expect(dueText(new Date('2026-03-01T10:12:00Z'), now)).toBe('due in 12\u2009min');
		expect(dueText(new Date('2026-03-01T10:00:20Z'), now)).toBe('due now');
		expect(dueText(new Date('2026-03-01T09:40:00Z'), now)).toBe('overdue by 20\u2009min');
	});
});

describe('clock and typed numbers', () => {
	it('shows the time in the workshop’s zone, with the weekday on another day', () => {
		const now = new Date('2026-03-01T10:00:00Z');
		// Berlin is UTC+1 in March before the change (last Sunday, 29 March 2026).
		expect(formatClock(new Date('2026-03-01T10:20:00Z'), now, 'Europe/Berlin')).toBe('11:20');
		// 2026-03-02 was a Monday; 01:30 UTC is 02:30 in Berlin.
		expect(formatClock(new Date('2026-03-02T01:30:00Z'), now, 'Europe/Berlin')).toBe('Mon 02:30');
	});

	it('marks a reading older than one interval with its time, and only then', () => {
		const now = new Date('2026-03-01T10:00:00Z');
		// 60-minute interval: 59 min old is fresh; 61 min old is marked, 08:59 UTC being 09:59 in Berlin (UTC+1).
		expect(readAtText(new Date('2026-03-01T09:01:00Z'), now, 60, 'Europe/Berlin')).toBeNull();
		expect(readAtText(new Date('2026-03-01T08:59:00Z'), now, 60, 'Europe/Berlin')).toBe('read at 09:59');
		// A 15-minute interval marks a 20-minute-old reading; the day before shows its weekday.
		expect(readAtText('2026-03-01T09:40:00Z', now, 15, 'Europe/Berlin')).toBe('read at 10:40');
		expect(readAtText('2026-02-28T22:30:00Z', now, 60, 'Europe/Berlin')).toBe('read at Sat 23:30');
		expect(readAtText(null, now, 60, 'Europe/Berlin')).toBeNull();
	});

	it('reads a decimal comma and refuses what is not a number', () => {
		expect(parseTyped('4,182')).toBe(4.182);
		expect(parseTyped(' 4.2 ')).toBe(4.2);
		expect(parseTyped('')).toBeUndefined();
		expect(parseTyped('4.1.2')).toBeNull();
		expect(parseTyped('12V')).toBeNull();
		expect(parseTyped('-3')).toBe(-3);
	});
});

import { describe, expect, it } from 'vitest';
import { auditKinds, describeAuditEvent } from './audit-words';

describe('describeAuditEvent', () => {
	it('an edited reading: each changed field before → after, times in the zone', () => {
		// 20:30 UTC is 21:30 in Berlin in December (UTC+1).
		const words = describeAuditEvent(
			{
				kind: 'reading.edit',
				before: { volts: 4.21, tempC: 31, takenAt: '2026-12-01T20:30:00.000Z' },
				after: { volts: 4.12, tempC: 31, takenAt: '2026-12-01T20:35:00.000Z' },
				groupIndex: 7
			},
			'Europe/Berlin'
		);
		expect(words.title).toBe('Group 7 reading edited');
		expect(words.details).toEqual(['volts 4.21 → 4.12', 'time 1 Dec 2026, 21:30 → 1 Dec 2026, 21:35']);
	});

	it('a whole-pack reading, a note added, a temperature with its unit', () => {
		const words = describeAuditEvent({ kind: 'reading.edit', before: { note: '', ambientC: 19 }, after: { note: 'fan on', ambientC: 21.5 }, groupIndex: null }, 'UTC');
		expect(words).toEqual({ title: 'Whole-pack reading edited', details: ['note none → “fan on”', 'room temperature 19 °C → 21.5 °C'] });
	});

	it('a stop says its reason, an acknowledgement its note (either key it was written under)', () => {
		expect(describeAuditEvent({ kind: 'session.stop', before: { status: 'running' }, after: { status: 'stopped', reason: 'Smell of hot plastic.' } }, 'UTC')).toEqual({
			title: 'Session stopped',
			details: ['Reason: Smell of hot plastic.']
		});
		expect(describeAuditEvent({ kind: 'alert.acknowledge', before: null, after: { ackNote: 'Reseated the lead.' }, alertTitle: 'Group 7: drift' }, 'UTC')).toEqual({
			title: 'Alert acknowledged: Group 7: drift',
			details: ['Note: “Reseated the lead.”']
		});
		expect(describeAuditEvent({ kind: 'alert.acknowledge', before: null, after: { note: 'Step ended.' } }, 'UTC').details).toEqual(['Note: “Step ended.”']);
	});

	it('names every kind it lists, and an unknown kind by itself', () => {
		for (const kind of auditKinds) expect(describeAuditEvent({ kind, before: null, after: null }, 'UTC').title).not.toBe(kind);
		expect(describeAuditEvent({ kind: 'something.new', before: null, after: null }, 'UTC').title).toBe('something.new');
	});
});

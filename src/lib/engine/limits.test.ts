import { describe, expect, it } from 'vitest';
import { checkClock, defaultLimits, evaluateReadings, type GroupReading, type Limits } from './limits';
import { at } from './test-support';

function limits(chem: 'nmc' | 'lfp' = 'nmc', setVolts = 4.2): Limits {
	const r = defaultLimits(chem, setVolts);
	if (!r.ok) throw new Error(r.reason);
	return r;
}

describe('defaultLimits', () => {
	it.each([
		['overVoltsWarning', 4.12, 'set 4.10 V + 20 mV (issue 3)'],
		['overVoltsCritical', 4.25, '4.20 V + 50 mV — BU-409 ±50 mV'],
		['underVoltsWarning', 3.0, 'full discharge — BU-216'],
		['tempWarningC', 45, 'BU-410, JEITA'],
		['tempCriticalC', 60, 'JEITA: no charge above 60 °C'],
		['minChargeTempC', 0, 'BU-410: no charge below 0 °C'],
		['heatRiseCPerMinute', 1, 'common practice'],
		['heatAboveAmbientC', 10, 'common practice'],
		['driftWarningVolts', 0.03, 'common practice'],
		['driftCriticalVolts', 0.08, 'common practice'],
		['readingIntervalMinutes', 60, 'hourly is common — product brief'],
		['readingGraceMinutes', 15, 'issue 3'],
		['overrunFactor', 1.5, 'issue 3']
	] as const)('NMC at 4.10 V: %s = %f (%s)', (key, value, _source) => {
		expect(limits('nmc', 4.1)[key]).toBeCloseTo(value, 12);
	});

	it('LFP: critical at 3.70 V (3.65 V + 50 mV), under-voltage at 2.5 V (BU-216)', () => {
		const L = limits('lfp', 3.65);
		expect(L.overVoltsCritical).toBeCloseTo(3.7, 12);
		expect(L.underVoltsWarning).toBe(2.5);
	});

	it('refuses a set voltage above the chemistry maximum', () => {
		expect(defaultLimits('nmc', 4.3)).toMatchObject({ ok: false, reason: 'set-volts-above-maximum' });
	});
});

describe('evaluateReadings', () => {
	const L = limits('nmc', 4.2);
	const now = at(10);
	const r = (groupId: string, x: Partial<GroupReading>): GroupReading => ({ groupId, at: now, ...x });
	const kinds = (alerts: { kind: string; severity: string; groupId?: string }[]) => alerts.map((a) => `${a.kind}/${a.severity}/${a.groupId ?? ''}`).sort();

	it.each([
		['4.21 V is within set + 20 mV', [r('a', { volts: 4.21 })], []],
		['4.23 V: over-voltage warning', [r('a', { volts: 4.23 })], ['over-voltage/warning/a']],
		['4.26 V: over-voltage critical (BU-409)', [r('a', { volts: 4.26 })], ['over-voltage/critical/a']],
		['2.9 V: under-voltage warning', [r('a', { volts: 2.9 })], ['under-voltage/warning/a']],
		['46 °C: over-temperature warning', [r('a', { tempC: 46 })], ['over-temperature/warning/a']],
		['61 °C: over-temperature critical (JEITA)', [r('a', { tempC: 61 })], ['over-temperature/critical/a']],
		['−2 °C while charging: cold charge (BU-410)', [r('a', { tempC: -2 })], ['cold-charge/critical/a']],
		['40 mV between groups: drift warning', [r('a', { volts: 3.9 }), r('b', { volts: 3.94 }), r('c', { volts: 3.905 })], ['drift/warning/b']],
		['90 mV between groups: drift critical', [r('a', { volts: 3.9 }), r('b', { volts: 3.99 }), r('c', { volts: 3.9 })], ['drift/critical/b']],
		['current down to termination: step finished', [r('a', { volts: 4.2, amps: 0.15 })], ['step-finished/info/a']]
	])('%s', (_, latest, expected) => {
		const alerts = evaluateReadings({ limits: L, latest, charging: true, terminationAmps: 0.16, now });
		expect(kinds(alerts)).toEqual(expected);
		for (const a of alerts) expect(a.message.length).toBeGreaterThan(30);
	});

	it('heat rise: faster than 1 °C/min against the previous reading, or 10 °C above ambient (common practice)', () => {
		const prev = [{ groupId: 'a', at: at(9.9), tempC: 25 }];
		const fast = evaluateReadings({ limits: L, latest: [{ groupId: 'a', at: at(10), tempC: 33 }], previous: prev, charging: true, now });
		expect(fast).toContainEqual(expect.objectContaining({ kind: 'heat-rise', value: 8 / 6 }));
		const warm = evaluateReadings({ limits: L, latest: [{ groupId: 'a', at: at(10), tempC: 36 }], ambientC: 22, charging: true, now });
		expect(warm).toContainEqual(expect.objectContaining({ kind: 'heat-rise', value: 14, threshold: 10 }));
		expect(evaluateReadings({ limits: L, latest: [{ groupId: 'a', at: at(10), tempC: 36 }], ambientC: 22, charging: false, now })).toEqual([]);
	});

	it('uses the newest reading of each group and skips values that are not numbers', () => {
		const alerts = evaluateReadings({
			limits: L,
			latest: [
				{ groupId: 'a', at: at(9), volts: 4.3 },
				{ groupId: 'a', at: at(10), volts: 4.2 },
				{ groupId: 'b', at: at(10), volts: Number.NaN, tempC: Number.NaN }
			],
			charging: true,
			now
		});
		expect(alerts).toEqual([]);
	});

	it('a cold pack at rest is not a cold charge', () => {
		expect(evaluateReadings({ limits: L, latest: [r('a', { tempC: -5 })], charging: false, now })).toEqual([]);
	});
});

describe('checkClock', () => {
	const L = limits();
	it.each([
		['70 min since the last reading: within 60 + 15', { lastReadingAt: at(0), now: at(70 / 60) }, []],
		['80 min since the last reading: overdue', { lastReadingAt: at(0), now: at(80 / 60) }, ['reading-overdue']],
		['no reading yet, 2 h into the step: overdue', { lastReadingAt: null, stepStartedAt: at(0), now: at(2) }, ['reading-overdue']],
		['3.1 h into a 2 h step: overrun (> 1.5 ×)', { lastReadingAt: at(3), stepStartedAt: at(0), stepExpectedHours: 2, now: at(3.1) }, ['step-overrun']],
		['2.9 h into a 2 h step: still fine', { lastReadingAt: at(2.8), stepStartedAt: at(0), stepExpectedHours: 2, now: at(2.9) }, []]
	])('%s', (_, input, expected) => {
		expect(checkClock({ limits: L, ...input }).map((a) => a.kind)).toEqual(expected);
	});

	it('gives minutes and hours with their thresholds', () => {
		const [a] = checkClock({ limits: L, lastReadingAt: at(0), now: at(1.5) });
		expect(a).toMatchObject({ kind: 'reading-overdue', severity: 'warning', value: 90, threshold: 75 });
	});
});

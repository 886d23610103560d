import { describe, expect, it } from 'vitest';
import { chemistries } from '$lib/engine';
import {
	confirmationNamesValues,
	formValuesFrom,
	instantToLocal,
	localToInstant,
	mergeLimits,
	nightWatchFor,
	toPlanInput,
	type PlanFormValues
} from '$lib/plan-form';
import { computeSessionPlan, windowsFor, type PlanCharger, type PlanPack } from '$lib/session-plan';

// Expected instants are worked by hand from the tz database's rules, written out as UTC:
// Europe/Berlin is UTC+1 (CET) in winter and UTC+2 (CEST) in summer; in 2026 the clocks go forward
// on Sunday 29 March at 02:00 CET (= 01:00 UTC, the wall jumps to 03:00) and back on Sunday
// 25 October at 03:00 CEST (= 01:00 UTC, the wall goes back to 02:00).
// America/New_York is UTC−5 (EST) / UTC−4 (EDT); in 2026 forward on 8 March at 02:00 EST
// (= 07:00 UTC) and back on 1 November at 02:00 EDT (= 06:00 UTC).
// Pacific/Auckland in January is UTC+13 (NZDT). Each assertion names an instant that a reading
// in the machine's own zone (UTC on CI) would get wrong.

const groupIds = ['g1', 'g2', 'g3'];

function values(over: Partial<PlanFormValues> = {}): PlanFormValues {
	return {
		packId: 'p1',
		name: '',
		kind: 'one-at-a-time',
		target: 'full',
		targetVolts: '',
		amps: '',
		chargerId: 'c1',
		channelIds: [],
		topUpChannelId: '',
		bleedBy: 'ohms',
		bleedValue: '',
		restHours: '',
		swapMinutes: '10',
		start: '2026-01-15T07:00',
		daily: [],
		once: [],
		readingIntervalMinutes: '60',
		watchUserId: '',
		startVolts: { g1: '3.6', g2: '3,6', g3: '3.60' },
		limits: {},
		limitsConfirmation: '',
		...over
	};
}

const iso = (d: Date) => d.toISOString();

describe('localToInstant: a wall-clock time in the workshop zone', () => {
	it.each([
		['Pacific/Auckland', '2026-01-15T07:00', '2026-01-14T18:00:00.000Z', null], // NZDT, UTC+13
		['America/New_York', '2026-01-15T07:00', '2026-01-15T12:00:00.000Z', null], // EST, UTC−5
		['Europe/Berlin', '2026-03-29T01:30', '2026-03-29T00:30:00.000Z', null], // still CET
		['Europe/Berlin', '2026-03-29T03:30', '2026-03-29T01:30:00.000Z', null], // already CEST
		// 02:30 never shows on the wall: read with CET (before the change) → 01:30 UTC = 03:30 CEST.
		['Europe/Berlin', '2026-03-29T02:30', '2026-03-29T01:30:00.000Z', 'skipped'],
		// 02:30 shows twice: first at CEST (00:30 UTC), then at CET (01:30 UTC); the first is taken.
		['Europe/Berlin', '2026-10-25T02:30', '2026-10-25T00:30:00.000Z', 'repeated'],
		// 01:30 shows twice in New York: EDT (05:30 UTC), then EST (06:30 UTC).
		['America/New_York', '2026-11-01T01:30', '2026-11-01T05:30:00.000Z', 'repeated'],
		['America/New_York', '2026-03-08T02:15', '2026-03-08T07:15:00.000Z', 'skipped']
	])('%s %s → %s', (zone, text, expected, note) => {
		const r = localToInstant(text, zone);
		expect(r.ok).toBe(true);
		if (!r.ok) return;
		expect(iso(r.date)).toBe(expected);
		expect(r.note).toBe(note);
	});

	it('refuses text that is not a date and time, and days that do not exist', () => {
		expect(localToInstant('tomorrow 7', 'Europe/Berlin').ok).toBe(false);
		expect(localToInstant('2026-02-30T07:00', 'Europe/Berlin').ok).toBe(false);
		expect(localToInstant('2026-01-15T24:00', 'Europe/Berlin').ok).toBe(false);
	});

	it('gives the wall time back in the zone (the edit page fills its inputs with it)', () => {
		expect(instantToLocal(new Date('2026-01-14T18:00:00Z'), 'Pacific/Auckland')).toBe('2026-01-15T07:00');
		expect(instantToLocal(new Date('2026-10-25T01:30:00Z'), 'Europe/Berlin')).toBe('2026-10-25T02:30');
	});
});

describe('toPlanInput', () => {
	it('reads the start and one-off windows in the workshop zone, whatever the machine zone', () => {
		const r = toPlanInput(
			values({ start: '2026-01-15T07:00', once: [{ start: '2026-01-15T23:00', end: '2026-01-16T07:00' }] }),
			'Pacific/Auckland',
			groupIds
		);
		expect(r.ok).toBe(true);
		if (!r.ok) return;
		expect(iso(r.input.plannedStart)).toBe('2026-01-14T18:00:00.000Z');
		// 23:00 NZDT = 10:00 UTC the same date; 07:00 NZDT next day = 18:00 UTC.
		expect(r.input.handsOn.once).toEqual([{ start: '2026-01-15T10:00:00.000Z', end: '2026-01-15T18:00:00.000Z' }]);
		expect(r.input.startVolts).toEqual({ g1: 3.6, g2: 3.6, g3: 3.6 });
		expect(r.input.swapMinutes).toBe(10);
	});

	it('a night watch across midnight on the spring-forward night is 8 hours, not 9 (Berlin)', () => {
		const r = toPlanInput(
			values({ start: '2026-03-28T21:00', once: [{ start: '2026-03-28T22:00', end: '2026-03-29T07:00' }] }),
			'Europe/Berlin',
			groupIds
		);
		expect(r.ok).toBe(true);
		if (!r.ok) return;
		// 22:00 CET = 21:00 UTC; 07:00 CEST = 05:00 UTC.
		expect(r.input.handsOn.once).toEqual([{ start: '2026-03-28T21:00:00.000Z', end: '2026-03-29T05:00:00.000Z' }]);
	});

	it('daily hours across midnight on the fall-back night reach the engine as absolute windows', () => {
		const r = toPlanInput(values({ start: '2026-10-24T20:00', daily: [{ from: '22:00', to: '06:00' }] }), 'Europe/Berlin', groupIds);
		expect(r.ok).toBe(true);
		if (!r.ok) return;
		expect(r.input.handsOn.daily).toEqual([{ from: '22:00', to: '06:00' }]);
		const w = windowsFor(r.input.handsOn, 'Europe/Berlin', r.input.plannedStart);
		expect(w.ok).toBe(true);
		if (!w.ok || !w.windows) return;
		// The night of 24→25 October: 22:00 CEST = 20:00 UTC to 06:00 CET = 05:00 UTC — 9 hours.
		const night = w.windows.find((x) => iso(x.start) === '2026-10-24T20:00:00.000Z');
		expect(night && iso(night.end)).toBe('2026-10-25T05:00:00.000Z');
		// The next night is an ordinary 8 hours: 21:00 UTC to 05:00 UTC.
		const next = w.windows.find((x) => iso(x.start) === '2026-10-25T21:00:00.000Z');
		expect(next && iso(next.end)).toBe('2026-10-26T05:00:00.000Z');
	});

	it('names every field it cannot read', () => {
		const r = toPlanInput(
			values({
				start: '',
				swapMinutes: '-3',
				startVolts: { g1: '3.6', g2: 'abc' },
				daily: [{ from: '7', to: '23:00' }],
				once: [{ start: '2026-01-16T07:00', end: '2026-01-15T23:00' }],
				amps: '0'
			}),
			'Europe/Berlin',
			groupIds
		);
		expect(r.ok).toBe(false);
		if (r.ok) return;
		expect(Object.keys(r.errors).sort()).toEqual(['amps', 'daily.0', 'once.0', 'start', 'startVolts.g2', 'startVolts.g3', 'swapMinutes']);
	});

	it('a saved plan fills the edit form with the same wall times, and reads back to the same instants', () => {
		const first = toPlanInput(
			values({ start: '2026-01-15T07:00', once: [{ start: '2026-01-15T23:00', end: '2026-01-16T07:00' }], limits: { tempWarningC: '40' } }),
			'Pacific/Auckland',
			groupIds
		);
		if (!first.ok) throw new Error('the first reading failed');
		const again = formValuesFrom(
			{ ...first.input, packId: 'p1', name: 'n', targetVolts: null, amps: null, chargerId: 'c1', topUpChannelId: null, bleedLoad: null, restHours: null, readingIntervalMinutes: 30, limitsConfirmation: '', watchUserId: null },
			{ tempWarningC: 40 },
			'Pacific/Auckland'
		);
		expect(again.start).toBe('2026-01-15T07:00');
		expect(again.once).toEqual([{ start: '2026-01-15T23:00', end: '2026-01-16T07:00' }]);
		expect(again.limits).toEqual({ tempWarningC: '40' });
		const second = toPlanInput(again, 'Pacific/Auckland', groupIds);
		expect(second.ok && second.input).toEqual(first.input);
	});

	it('says when the start time is skipped by the clocks', () => {
		const r = toPlanInput(values({ start: '2026-03-29T02:30' }), 'Europe/Berlin', groupIds);
		expect(r.ok && r.notes[0]).toContain('03:30');
	});
});

describe('a one-group-at-a-time plan over the spring-forward day (Berlin)', () => {
	// 3S1P NMC, 3 Ah cells at a rest of 3.60 V, from a 1 A supply, someone there 08:00–09:00 daily.
	// Worked by hand: each group needs at least 1.5 Ah (published NMC rest-voltage tables put 50 %
	// at about 3.7 V, so 3.60 V is below half full) at no more than 1 A, so each step lasts more than
	// 1.5 h and cannot end inside the one-hour window; and a 0.33C CC/CV charge of a Li-ion cell ends
	// within a few hours (BU-409: about 3 h at 1C, the CC part at most 3 Ah / 1 A = 3 h here), so it
	// ends before the next morning. Each next step therefore starts at the next 08:00 plus the
	// 10-minute swap, in Berlin's wall time: 28 March 08:00 CET (07:00 UTC), 29 March 08:10 CEST
	// (06:10 UTC — the clocks went forward overnight), 30 March 08:10 CEST (06:10 UTC).
	const pack: PlanPack = {
		series: 3,
		parallel: 1,
		chemistry: chemistries.nmc,
		cellCapacityAh: 3,
		cellMaxChargeAmps: 3,
		cellResistanceMilliOhms: null,
		bmsFitted: false,
		bmsBalanceAmps: null,
		groups: groupIds.map((id, i) => ({ id, index: i + 1 }))
	};
	const supply: PlanCharger = {
		id: 'c1',
		name: 'Bench supply',
		kind: 'bench-supply',
		channels: [{ id: 'ch1', name: '', position: 1, maxVolts: 30, maxAmps: 1, maxWatts: null, balanceAmps: null, maxSeriesCells: null }]
	};

	it('starts each step at the hands-on window in the workshop zone', () => {
		const r = toPlanInput(values({ start: '2026-03-28T08:00', daily: [{ from: '08:00', to: '09:00' }] }), 'Europe/Berlin', groupIds);
		expect(r.ok).toBe(true);
		if (!r.ok) return;
		const plan = computeSessionPlan(pack, [supply], r.input, 'Europe/Berlin');
		expect(plan.ok).toBe(true);
		if (!plan.ok) return;
		expect(plan.steps.map((s) => iso(s.expectedStart))).toEqual([
			'2026-03-28T07:00:00.000Z',
			'2026-03-29T06:10:00.000Z',
			'2026-03-30T06:10:00.000Z'
		]);
		for (const s of plan.steps) {
			const hours = (s.expectedEnd.getTime() - s.expectedStart.getTime()) / 3_600_000;
			expect(hours).toBeGreaterThan(1.5);
		}
		// Every step ends with nobody there, so the group sits held until the next morning.
		expect(plan.unattended.some((u) => u.what === 'held at set voltage')).toBe(true);
	});
});

describe('limits', () => {
	const defaults = (() => {
		const r = computeSessionPlan(
			{ series: 1, parallel: 1, chemistry: chemistries.nmc, cellCapacityAh: 3, cellMaxChargeAmps: 3, cellResistanceMilliOhms: null, bmsFitted: false, bmsBalanceAmps: null, groups: [{ id: 'g1', index: 1 }] },
			[],
			{ kind: 'rest-check', target: 'full', channelIds: [], swapMinutes: 0, restHours: 2, plannedStart: new Date('2026-01-15T07:00:00Z'), handsOn: { daily: [], once: [] }, startVolts: { g1: 3.6 } },
			'UTC'
		);
		if (!r.ok) throw new Error(r.message);
		return r.defaultLimits;
	})();

	it('a tighter limit needs nothing; a looser one is listed with its default', () => {
		// NMC charged to 4.20 V: act-now over-voltage 4.25 V (4.20 + 50 mV), no charging below 0 °C.
		const tighter = mergeLimits(defaults, { overVoltsCritical: '4.22', minChargeTempC: '5' }, 60);
		expect(tighter.loosened).toEqual([]);
		expect(tighter.limits.overVoltsCritical).toBe(4.22);
		const looser = mergeLimits(defaults, { overVoltsCritical: '4,28', minChargeTempC: '-5' }, 30);
		expect(looser.loosened.map((l) => [l.key, l.value, l.defaultValue])).toEqual([
			['overVoltsCritical', 4.28, defaults.overVoltsCritical],
			['minChargeTempC', -5, defaults.minChargeTempC]
		]);
		expect(looser.limits.readingIntervalMinutes).toBe(30);
	});

	it('a watch level above its act-now level is refused beside the field', () => {
		// Default over-voltage watch for 4.20 V is 4.22 V (set + 20 mV); an act-now level of 4.21 V is below it.
		expect(mergeLimits(defaults, { overVoltsCritical: '4.21' }, 60).errors).toHaveProperty('limits.overVoltsWarning');
		expect(mergeLimits(defaults, { overVoltsCritical: '4.21', overVoltsWarning: '4.20' }, 60).errors).toEqual({});
		expect(mergeLimits(defaults, { tempCriticalC: '40' }, 60).errors).toHaveProperty('limits.tempWarningC');
	});

	it('a confirmation must name each loosened value', () => {
		const { loosened } = mergeLimits(defaults, { overVoltsCritical: '4.28', tempWarningC: '50' }, 60);
		expect(confirmationNamesValues('', loosened)).toBe(false);
		expect(confirmationNamesValues('Datasheet: 4.28 V maximum', loosened)).toBe(false);
		expect(confirmationNamesValues('Datasheet: 4,28 V maximum, charge up to 50 °C', loosened)).toBe(true);
	});
});

describe('nightWatchFor', () => {
	it('covers the first night between the daily hours', () => {
		expect(nightWatchFor({ start: '2026-12-31T18:00', daily: [{ from: '07:00', to: '23:00' }] })).toEqual({
			start: '2026-12-31T23:00',
			end: '2027-01-01T07:00'
		});
		expect(nightWatchFor({ start: '2026-03-28T09:00', daily: [] })).toEqual({ start: '2026-03-28T22:00', end: '2026-03-29T07:00' });
	});
});

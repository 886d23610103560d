import { describe, expect, it } from 'vitest';
import {
	handoverSchema,
	limitProblems,
	plannedStartInstant,
	sessionPatchSchema,
	sessionPlanSchema,
	statusActionSchema,
	stepActionSchema,
	stopSchema
} from './sessions';

const packId = 'a'.repeat(24);

describe('plannedStartInstant', () => {
	// Worked by hand from the tz database's rules: Berlin is UTC+1 in winter and UTC+2 in summer,
	// switching at 01:00 UTC on the last Sundays of March and October; New York is UTC−5 in winter.
	it.each([
		['2026-12-03T21:00', 'Europe/Berlin', '2026-12-03T20:00:00.000Z'],
		['2026-07-03T21:00', 'Europe/Berlin', '2026-07-03T19:00:00.000Z'],
		['2026-12-03T21:00', 'America/New_York', '2026-12-04T02:00:00.000Z'],
		// 02:30 never happens on 29 March 2026 in Berlin (02:00 → 03:00): read as 03:30 CEST.
		['2026-03-29T02:30', 'Europe/Berlin', '2026-03-29T01:30:00.000Z'],
		// 02:30 happens twice on 25 October 2026 (03:00 → 02:00): the later one, 02:30 CET.
		['2026-10-25T02:30', 'Europe/Berlin', '2026-10-25T01:30:00.000Z'],
		// An instant with its offset is that instant, whatever the workshop's zone.
		['2026-12-03T21:00:00+05:30', 'Europe/Berlin', '2026-12-03T15:30:00.000Z'],
		['2026-12-03T21:00:00Z', 'America/New_York', '2026-12-03T21:00:00.000Z']
	])('%s in %s is %s', (value, zone, iso) => {
		expect(plannedStartInstant(value, zone)?.toISOString()).toBe(iso);
	});

	it('refuses dates that do not exist', () => {
		expect(plannedStartInstant('2026-02-31T10:00', 'Europe/Berlin')).toBeNull();
		expect(plannedStartInstant('2026-12-03 21:00', 'Europe/Berlin')).toBeNull();
		expect(plannedStartInstant('tomorrow evening', 'Europe/Berlin')).toBeNull();
	});
});

describe('sessionPlanSchema', () => {
	it('fills what the form left out with its defaults', () => {
		const parsed = sessionPlanSchema.parse({ packId, kind: 'one-at-a-time', plannedStart: '2026-12-03T21:00' });
		expect(parsed).toMatchObject({
			target: 'full',
			swapMinutes: 5,
			readingIntervalMinutes: 60,
			handsOn: { daily: [], once: [] },
			limits: {},
			startVolts: {},
			draft: false,
			watchUserId: null
		});
	});

	it('drops step times a client sends: the plan is the server’s', () => {
		const parsed = sessionPlanSchema.parse({
			packId,
			kind: 'one-at-a-time',
			plannedStart: '2026-12-03T21:00',
			steps: [{ expectedStart: '2000-01-01T00:00:00Z' }]
		});
		expect('steps' in parsed).toBe(false);
	});

	it.each([
		[{ swapMinutes: 241 }, 'swapMinutes'],
		[{ readingIntervalMinutes: 4 }, 'readingIntervalMinutes'],
		[{ readingIntervalMinutes: 721 }, 'readingIntervalMinutes'],
		[{ targetVolts: 5.1 }, 'targetVolts'],
		[{ amps: 0 }, 'amps'],
		[{ restHours: 2161 }, 'restHours'],
		[{ name: 'Night\u0000watch' }, 'name'],
		[{ name: 'x'.repeat(81) }, 'name'],
		[{ limitsConfirmation: 'Datasheet\u0007' }, 'limitsConfirmation'],
		[{ limits: { overVoltsCritical: 6 } }, 'limits.overVoltsCritical'],
		[{ limits: { somethingElse: 1 } }, 'limits'],
		[{ handsOn: { daily: [{ from: '7:00', to: '23:00' }], once: [] } }, 'handsOn.daily.0.from'],
		[{ handsOn: { daily: [{ from: '07:00', to: '07:00' }], once: [] } }, 'handsOn.daily.0'],
		[{ handsOn: { daily: [], once: [{ start: '2026-12-03T22:00:00Z', end: '2026-12-03T21:00:00Z' }] } }, 'handsOn.once.0'],
		[{ startVolts: { [packId]: 5.5 } }, `startVolts.${packId}`],
		[{ target: 'volts' }, 'targetVolts'],
		[{ bleedLoad: { ohms: 10, amps: 1 } }, 'bleedLoad'],
		[{ plannedStart: 'soon' }, 'plannedStart']
	])('refuses %j at %s', (change, path) => {
		const result = sessionPlanSchema.safeParse({ packId, kind: 'one-at-a-time', plannedStart: '2026-12-03T21:00', ...change });
		expect(result.success).toBe(false);
		expect(result.error?.issues.map((i) => i.path.join('.'))).toContain(path);
	});
});

describe('sessionPatchSchema', () => {
	it('keeps only the keys sent (no defaults filled in)', () => {
		expect(sessionPatchSchema.parse({ name: 'Renamed' })).toEqual({ name: 'Renamed' });
		expect(sessionPatchSchema.parse({})).toEqual({});
	});

	it('does not move a session to another pack', () => {
		expect(sessionPatchSchema.safeParse({ packId }).success).toBe(false);
	});
});

describe('run actions', () => {
	it('needs a reason to stop', () => {
		expect(stopSchema.safeParse({ reason: '   ' }).success).toBe(false);
		expect(stopSchema.parse({ reason: ' Group 3 hot ' })).toEqual({ reason: 'Group 3 hot' });
		expect(statusActionSchema.safeParse({ action: 'stop' }).success).toBe(false);
		expect(statusActionSchema.safeParse({ action: 'pause' }).success).toBe(true);
	});

	it('takes only the known actions', () => {
		expect(stepActionSchema.safeParse({ action: 'finish' }).success).toBe(false);
		expect(stepActionSchema.safeParse({ action: 'done' }).success).toBe(true);
		expect(statusActionSchema.safeParse({ action: 'delete' }).success).toBe(false);
		expect(handoverSchema.safeParse({ userId: '' }).success).toBe(false);
	});
});

describe('limitProblems', () => {
	// A hand-written set of defaults (NMC charged to 4.20 V: stop at 4.20 + 0.05 V, warn at +0.02 V).
	const defaults = {
		overVoltsWarning: 4.22,
		overVoltsCritical: 4.25,
		underVoltsWarning: 3.0,
		tempWarningC: 45,
		tempCriticalC: 60,
		minChargeTempC: 0,
		heatRiseCPerMinute: 1,
		heatAboveAmbientC: 10,
		driftWarningVolts: 0.03,
		driftCriticalVolts: 0.08,
		readingIntervalMinutes: 60,
		readingGraceMinutes: 15,
		overrunFactor: 1.5
	};

	it('lets every limit be tightened without a word', () => {
		expect(limitProblems(defaults, { overVoltsCritical: 4.21, overVoltsWarning: 4.2, underVoltsWarning: 3.2, minChargeTempC: 5, tempWarningC: 40, driftWarningVolts: 0.02 }, '')).toEqual([]);
	});

	it.each([
		[{ overVoltsCritical: 4.3 }, 'overVoltsCritical', /over-voltage act-now limit of 4\.3 V is looser than .* 4\.25 V/],
		[{ minChargeTempC: -5 }, 'minChargeTempC', /lowest charging temperature of -5 °C/],
		[{ underVoltsWarning: 2.5 }, 'underVoltsWarning', /under-voltage limit of 2\.5 V/],
		[{ driftCriticalVolts: 0.1 }, 'driftCriticalVolts', /group spread act-now limit of 0\.1 V/]
	])('names a loosened limit %j', (overrides, key, message) => {
		const [problem] = limitProblems(defaults, overrides, '');
		expect(problem.key).toBe(key);
		expect(problem.message).toMatch(message);
	});

	it('takes a loosened limit when the confirmation names its value (a decimal comma too)', () => {
		expect(limitProblems(defaults, { overVoltsCritical: 4.3 }, 'Datasheet p. 3: charge cut-off 4,30 V')).toEqual([]);
		expect(limitProblems(defaults, { overVoltsCritical: 4.3 }, 'Datasheet says 4.35 V')).toHaveLength(1);
		expect(limitProblems(defaults, { minChargeTempC: -5 }, 'Datasheet: charge from −5 °C')).toEqual([]);
	});

	it('keeps each warning on the safe side of its stop', () => {
		expect(limitProblems(defaults, { overVoltsWarning: 4.21, overVoltsCritical: 4.2 }, '').map((p) => p.key)).toEqual(['overVoltsWarning']);
		expect(limitProblems(defaults, { tempWarningC: 44, tempCriticalC: 40 }, '').map((p) => p.key)).toEqual(['tempWarningC']);
	});
});

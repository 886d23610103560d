import { describe, expect, it } from 'vitest';
import { chemistries, estimateCharge } from '$lib/engine';
import { buildRunView, type RunInput, type RunReading, type RunStepInput } from './run-view';

// A 4S2P NMC pack of 3 Ah cells (a group is 6 Ah), charged one group at a time to 4.20 V at 3 A on
// one bench supply. Every expected figure below is worked by hand in the comments.
const t = (hhmm: string) => new Date(`2026-03-01T${hhmm}:00Z`);
const groups = [1, 2, 3, 4].map((index) => ({ id: `g${index}`, index }));

const step = (position: number, groupId: string | null, start: string, end: string, extra: Partial<RunStepInput> = {}): RunStepInput => ({
	id: `s${position}`,
	position,
	groupId,
	channelId: 'ch1',
	channelLabel: 'Channel 1',
	role: 'charge',
	setVolts: 4.2,
	amps: 3,
	ah: 0,
	expectedStart: t(start),
	expectedEnd: t(end),
	actualStart: null,
	actualEnd: null,
	status: 'waiting',
	restReadingDueAt: null,
	...extra
});

let nextId = 1;
const reading = (groupId: string | null, at: string, values: Partial<RunReading>): RunReading => ({
	id: nextId++,
	groupId,
	stepId: null,
	takenAt: t(at),
	volts: null,
	amps: null,
	tempC: null,
	ambientC: null,
	...values
});

function input(overrides: Partial<RunInput> = {}): RunInput {
	return {
		session: {
			status: 'running',
			setVolts: 4.2,
			readingIntervalMinutes: 60,
			limits: {},
			startedAt: t('06:00'),
			endedAt: null,
			plannedEnd: t('16:00')
		},
		pack: { series: 4, parallel: 2, chemistry: chemistries.nmc, cellCapacityAh: 3 },
		groups,
		steps: [
			step(1, 'g1', '06:00', '08:00', { status: 'done', actualStart: t('06:00'), actualEnd: t('08:00'), restReadingDueAt: t('10:00') }),
			step(2, 'g2', '08:05', '10:00', { status: 'running', actualStart: t('08:05') }),
			step(3, 'g3', '10:05', '12:00'),
			step(4, 'g4', '12:05', '14:00')
		],
		readings: [],
		now: t('11:00'),
		...overrides
	};
}

describe('the run view', () => {
	it('names the running and the next step in the bench’s words', () => {
		const view = buildRunView(input());
		expect(view.running.map((s) => s.instruction)).toEqual(['Move the leads to group 2, set 4.20\u2009V and 3\u2009A']);
		expect(view.next?.instruction).toBe('Move the leads to group 3, set 4.20\u2009V and 3\u2009A');
		expect(view.progress).toEqual({ done: 1, total: 4 });
	});

	it('shows volts per cell, mV from the mean, °C and a state word per group', () => {
		const view = buildRunView(
			input({
				readings: [
					reading('g1', '10:30', { volts: 4.1 }),
					reading('g2', '10:30', { volts: 4.12, tempC: 50 }),
					reading('g3', '10:30', { volts: 4.08 }),
					reading('g4', '10:30', { volts: 4.14 }),
					// The whole pack read at the terminals: 16.48 V over 4 in series = 4.120 V per cell.
					reading(null, '10:31', { volts: 16.48 })
				]
			})
		);
		// Mean of 4.10, 4.12, 4.08, 4.14 = 4.110 V → −10, +10, −30, +30 mV.
		expect(view.tiles.map((g) => Math.round(g.deltaMilliVolts!))).toEqual([-10, 10, -30, 30]);
		expect(view.tiles.map((g) => g.volts)).toEqual([4.1, 4.12, 4.08, 4.14]);
		// Group 2 at 50 °C is over NMC's 45 °C charge maximum (BU-410): watch, and says what to do.
		// No drift yet: group 2 is on the charger and groups 3 and 4 wait for their turn, so the
		// 60 mV spread says nothing about the groups.
		expect(view.tiles.map((g) => g.state)).toEqual(['steady', 'watch', 'steady', 'steady']);
		expect(view.tiles[1].messages.join(' ')).toMatch(/Group 2 is at 50\.0 °C.*Lower the current or pause/);
		expect(view.tiles[1].charging).toBe(true);
		expect(view.packMessages).toEqual([]);
		expect(view.pack).toMatchObject({ volts: 16.48, state: 'steady' });
		expect(view.pack!.perCell).toBeCloseTo(4.12, 6);
	});

	it('judges drift between the groups whose charge is over, not against one still on the charger', () => {
		const done = (n: number, from: string, to: string) =>
			step(n, `g${n}`, from, to, { status: 'done', actualStart: t(from), actualEnd: t(to) });
		const view = buildRunView(
			input({
				steps: [done(1, '06:00', '07:00'), done(2, '07:05', '08:00'), done(3, '08:05', '09:00'), step(4, 'g4', '09:05', '12:00', { status: 'running', actualStart: t('09:05') })],
				readings: [
					reading('g1', '10:30', { volts: 4.18 }),
					reading('g2', '10:30', { volts: 4.19 }),
					reading('g3', '10:30', { volts: 4.14 }),
					reading('g4', '10:30', { volts: 3.9 })
				]
			})
		);
		// Groups 1–3 are charged: 4.19 − 4.14 = 50 mV apart, over the 30 mV drift warning and under
		// the 80 mV critical one (defaultLimits) — a warning. Group 4, on the charger at 3.90 V, is
		// 290 mV below them and is left out (it would make it an act-now).
		expect(view.packMessages.map((m) => m.severity)).toEqual(['warning']);
		expect(view.tiles[3].state).toBe('steady');
	});

	it('says act now when a group is over the cells’ limit', () => {
		// 4.26 V per cell is over NMC's 4.20 V maximum + 50 mV (BU-409's tolerance) = 4.25 V.
		const view = buildRunView(input({ readings: [reading('g2', '10:30', { volts: 4.26 })] }));
		expect(view.tiles[1].state).toBe('act-now');
		expect(view.tiles[0].state).toBe('idle');
	});

	it('shows a stored alert’s state on its group while it is active, and sounds the alarm until a critical one is acknowledged', () => {
		const stored = (id: string, severity: 'warning' | 'critical', groupId: string | null, extra: { active?: boolean; acknowledged?: boolean } = {}) => ({
			id,
			severity,
			groupId,
			title: `${id} title`,
			action: '',
			active: extra.active ?? true,
			acknowledged: extra.acknowledged ?? false
		});
		// Readings alone say steady everywhere; the stored alerts decide.
		const steady = ['g1', 'g2', 'g3', 'g4'].map((g) => reading(g, '10:30', { volts: 4.1 }));
		const view = buildRunView(
			input({
				readings: steady,
				alerts: [
					stored('w3', 'warning', 'g3'),
					stored('c3', 'critical', 'g3', { acknowledged: true }),
					stored('old4', 'critical', 'g4', { active: false }),
					stored('w1', 'warning', 'g1', { active: false, acknowledged: false })
				]
			})
		);
		// Group 3: the critical alert wins over the warning (acknowledged or not, its condition holds).
		expect(view.tiles.map((g) => g.state)).toEqual(['steady', 'steady', 'act-now', 'steady']);
		expect(view.tiles[2].alert).toEqual({ id: 'c3', severity: 'critical', title: 'c3 title' });
		expect(view.tiles[0].alert).toBeNull();
		// Group 4's critical alert has cleared but nobody acknowledged it: the alarm sounds.
		expect(view.alarm).toBe(true);
		expect(view.alerts.map((a) => [a.id, a.groupIndex])).toEqual([
			['c3', 3],
			['old4', 4],
			['w3', 3],
			['w1', 1]
		]);

		const quiet = buildRunView(input({ readings: steady, alerts: [stored('c3', 'critical', 'g3', { acknowledged: true }), stored('w2', 'warning', 'g2')] }));
		expect(quiet.alarm).toBe(false);
		expect(quiet.tiles.map((g) => g.state)).toEqual(['steady', 'watch', 'act-now', 'steady']);
	});

	it('re-estimates the running step from its readings and moves the expected end', () => {
		// CV readings of step 2 whose current halves every hour: 2.0, 1.0, 0.5 A at 08:30, 09:30, 10:30.
		// From 0.5 A at 10:30 to the 0.3 A end (NMC ends at C/20 of a 6 Ah group) takes log2(0.5/0.3) =
		// 0.737 h; at 11:00 the current is 0.5 × 2^(−0.5) = 0.354 A, leaving log2(0.354/0.3) = 0.237 h.
		const cv = (at: string, amps: number) => ({ ...reading('g2', at, { volts: 4.195, amps }), stepId: 's2' });
		const view = buildRunView(input({ readings: [cv('08:30', 2), cv('09:30', 1), cv('10:30', 0.5)] }));
		const ttf = view.timeToFull[0];
		expect(ttf.basis).toBe('readings');
		expect(ttf.phase).toBe('cv');
		expect(ttf.hours).toBeCloseTo(0.237, 2);
		// Step 2 now ends at 11:00 + 0.237 h instead of 10:00: every later step moves by 1.237 h,
		// so step 4 ends at 14:00 + 1.237 h = 15:14:13.
		const end = new Date(view.expectedEnd!).getTime();
		expect(Math.abs(end - t('15:14').getTime())).toBeLessThan(60_000);
	});

	it('in CC counts the amp-hours in since the step started, from the plan\'s start state', () => {
		// Step 2 puts 4.8 Ah into a 6 Ah group that ends full at 4.20 V: it started at 1 − 4.8 / 6 = 20 %.
		// 3 A logged at 08:35 and 09:05 after the 08:05 start: 3 A × 1 h = 3 Ah → 20 % + 3 / 6 = 70 %.
		const running = step(2, 'g2', '08:05', '10:00', { status: 'running', actualStart: t('08:05'), ah: 4.8 });
		const cc = (at: string, volts: number) => ({ ...reading('g2', at, { volts, amps: 3 }), stepId: 's2' });
		const view = buildRunView(input({ steps: [running], readings: [cc('08:35', 3.8), cc('09:05', 3.9)], now: t('09:05') }));
		const fromSeventy = estimateCharge({ chemistry: 'nmc', capacityAh: 6, amps: 3, setVolts: 4.2, startSoc: 0.7 });
		if (!fromSeventy.ok) throw new Error(fromSeventy.reason);
		expect(view.timeToFull[0]).toMatchObject({ basis: 'readings', phase: 'cc' });
		expect(view.timeToFull[0].hours).toBeCloseTo(fromSeventy.totalHours, 3);
	});

	it('calls a step finished only when its current is down to the end current at the set voltage', () => {
		// NMC ends a charge at C/20: 0.30 A for a 6 Ah group. Group 2 (step 2 running) logs 0.25 A.
		const low = (volts: number) => buildRunView(input({ readings: [{ ...reading('g2', '10:30', { volts, amps: 0.25 }), stepId: 's2' }] }));
		// At 3.90 V the group is nowhere near 4.20 V: a supply set that low in current is not a finished step.
		expect(low(3.9).tiles[1].messages.join(' ')).not.toMatch(/step is finished/);
		// At 4.19 V — within 30 mV of the set 4.20 V — and 0.25 A it is.
		expect(low(4.19).tiles[1].messages.join(' ')).toMatch(/Group 2's current is down to 0\.25 A: its step is finished/);
	});

	it('falls back to the plan for time to full before the step has readings', () => {
		// Step 2 was planned for 1 h 55 min and started at 08:05: it should end at 10:00, an hour ago.
		const view = buildRunView(input({ now: t('09:00') }));
		expect(view.timeToFull[0]).toMatchObject({ basis: 'plan' });
		expect(view.timeToFull[0].hours).toBeCloseTo(1, 6);
	});

	it('asks for a reading an interval after the last one, and for rest readings once rested', () => {
		const view = buildRunView(input({ readings: [reading('g1', '09:00', { volts: 4.18 }), reading('g2', '10:20', { volts: 4.1 })] }));
		// Last reading 10:20 + 60 min.
		expect(view.nextReadingDue).toBe(t('11:20').toISOString());
		// Group 1's step ended at 08:00 with its rest reading due at 10:00; its last reading (09:00) came before.
		expect(view.restRequests).toEqual([{ stepId: 's1', groupIndex: 1, dueAt: t('10:00').toISOString(), isDue: true }]);

		const after = buildRunView(input({ readings: [reading('g1', '10:10', { volts: 4.16 })] }));
		expect(after.restRequests).toEqual([]);
	});

	it('is idle and asks for nothing once the session is stopped', () => {
		const base = input({ readings: [reading('g1', '10:30', { volts: 4.1 })] });
		const view = buildRunView({ ...base, session: { ...base.session, status: 'stopped', endedAt: t('10:45') } });
		expect(view.tiles[0].state).toBe('idle');
		expect(view.nextReadingDue).toBeNull();
		expect(view.restRequests).toEqual([]);
		expect(view.expectedEnd).toBe(t('10:45').toISOString());
	});

	it('reads a whole-pack step from the pack’s own readings, divided by the groups in series', () => {
		// The pack charger holds 16.80 V over 4 groups (4.20 V per cell); the pack reads 16.78 V
		// (4.195 V per cell, within 30 mV of the set voltage: CV) while the current halves every hour.
		// As above: 0.237 h left at 11:00.
		const pack = (at: string, amps: number) => ({ ...reading(null, at, { volts: 16.78, amps }), stepId: 'p1' });
		const view = buildRunView(
			input({
				steps: [step(1, null, '08:00', '12:00', { id: 'p1', setVolts: 16.8, status: 'running', actualStart: t('08:00') })],
				readings: [pack('08:30', 2), pack('09:30', 1), pack('10:30', 0.5)]
			})
		);
		expect(view.running[0].nowText).toBe('The whole pack on the charger: 16.80\u2009V, 3\u2009A');
		expect(view.timeToFull[0]).toMatchObject({ basis: 'readings', phase: 'cv' });
		expect(view.timeToFull[0].hours).toBeCloseTo(0.237, 2);
		expect(view.tiles.every((g) => g.charging)).toBe(true);
		expect(view.pack!.perCell).toBeCloseTo(4.195, 6);
	});
});

import { describe, expect, it } from 'vitest';
import { compareSessions, type CompareSessionsInput, type SessionComparison, type SessionSnapshot } from './compare-sessions';

// Every expected number below is worked out by hand in the comments (volts per cell; a gap is the
// group minus the mean of the OTHER groups). Invented numbers, not the demo's.

const day = (iso: string) => new Date(`${iso}T18:00:00Z`);
const labels = { a: '5', b: '6', c: '7', d: '8' };

// The session that just ended (full charge, 1 Dec).
// End of charge:  a 4.180  b 4.175  c 4.140  d 4.185
//   a: 4.180 − (4.175 + 4.140 + 4.185)/3 = 4.180 − 12.500/3 = 4.180 − 4.166667 = +0.013333
//   b: 4.175 − (4.180 + 4.140 + 4.185)/3 = 4.175 − 12.505/3 = 4.175 − 4.168333 = +0.006667
//   c: 4.140 − (4.180 + 4.175 + 4.185)/3 = 4.140 − 12.540/3 = 4.140 − 4.180    = −0.040
//   d: 4.185 − (4.180 + 4.175 + 4.140)/3 = 4.185 − 12.495/3 = 4.185 − 4.165    = +0.020
//   (sum 0: the gaps of one session always add up to nothing)
// At rest:        a 4.150  b 4.145  c 4.100  d 4.155
//   a: 4.150 − 12.400/3 = 4.150 − 4.133333 = +0.016667
//   b: 4.145 − 12.405/3 = 4.145 − 4.135    = +0.010
//   c: 4.100 − 12.450/3 = 4.100 − 4.150    = −0.050
//   d: 4.155 − 12.395/3 = 4.155 − 4.131667 = +0.023333
const current: SessionSnapshot = {
	sessionId: 'now',
	endedAt: day('2026-12-01'),
	target: 'full',
	endVolts: { a: 4.18, b: 4.175, c: 4.14, d: 4.185 },
	restVolts: { a: 4.15, b: 4.145, c: 4.1, d: 4.155 }
};

const earlier: SessionSnapshot[] = [
	// Oldest full charge: every group level (gaps 0) — passed over, s2 is more recent.
	{ sessionId: 's1', endedAt: day('2026-10-01'), target: 'full', endVolts: { a: 4.2, b: 4.2, c: 4.2, d: 4.2 } },
	// The last full charge with every group:
	// end   a 4.190 b 4.185 c 4.175 d 4.195
	//   a: 4.190 − 12.555/3 = 4.190 − 4.185    = +0.005
	//   b: 4.185 − 12.560/3 = 4.185 − 4.186667 = −0.001667
	//   c: 4.175 − 12.570/3 = 4.175 − 4.190    = −0.015
	//   d: 4.195 − 12.550/3 = 4.195 − 4.183333 = +0.011667
	// rest  a 4.160 b 4.155 c 4.150 d 4.165
	//   a: 4.160 − 12.470/3 = +0.003333; b: 4.155 − 12.475/3 = −0.003333
	//   c: 4.150 − 12.480/3 = 4.150 − 4.160 = −0.010; d: 4.165 − 12.465/3 = 4.165 − 4.155 = +0.010
	{
		sessionId: 's2',
		endedAt: day('2026-11-01'),
		target: 'full',
		endVolts: { a: 4.19, b: 4.185, c: 4.175, d: 4.195 },
		restVolts: { a: 4.16, b: 4.155, c: 4.15, d: 4.165 }
	},
	// Another target: never compared (group c would be 150 mV below here).
	{ sessionId: 's3', endedAt: day('2026-11-20'), target: 'storage', endVolts: { a: 3.85, b: 3.85, c: 3.7, d: 3.85 } },
	// A later full charge that read a and b only: a +0.004, b −0.004 (each against the other alone);
	// c and d fall back to s2.
	{ sessionId: 's4', endedAt: day('2026-11-25'), target: 'full', endVolts: { a: 4.188, b: 4.184 } },
	// Ended after the current session: ignored.
	{ sessionId: 's5', endedAt: day('2026-12-10'), target: 'full', endVolts: { a: 4.0, b: 4.0, c: 3.0, d: 4.0 } }
];

function compare(input: CompareSessionsInput): SessionComparison {
	const r = compareSessions(input);
	if (!r.ok) throw new Error(r.reason);
	return r;
}

const close = (x: number | null) => (x === null ? null : expect.closeTo(x, 9));

describe('compareSessions: gaps to the others now and at the last comparable session', () => {
	it('gaps, the previous gaps (most recent same-target session that has the group) and the changes', () => {
		const r = compare({ current, earlier, driftLimitVolts: 0.02, labels });
		// Changes by hand: a 0.013333 − 0.004 = +0.009333 (end), 0.016667 − 0.003333 = +0.013333 (rest)
		// b 0.006667 + 0.004 = +0.010667, 0.010 + 0.003333 = +0.013333; c −0.040 + 0.015 = −0.025,
		// −0.050 + 0.010 = −0.040; d 0.020 − 0.011667 = +0.008333, 0.023333 − 0.010 = +0.013333.
		expect(r.groups).toEqual([
			{ groupId: 'a', endGapVolts: close(0.0133333333), restGapVolts: close(0.0166666667), previousEndGapVolts: close(0.004), previousRestGapVolts: close(0.0033333333), changeVolts: close(0.0093333333), restChangeVolts: close(0.0133333333), previousSessionId: 's4', exceeds: false },
			{ groupId: 'b', endGapVolts: close(0.0066666667), restGapVolts: close(0.01), previousEndGapVolts: close(-0.004), previousRestGapVolts: close(-0.0033333333), changeVolts: close(0.0106666667), restChangeVolts: close(0.0133333333), previousSessionId: 's4', exceeds: false },
			{ groupId: 'c', endGapVolts: close(-0.04), restGapVolts: close(-0.05), previousEndGapVolts: close(-0.015), previousRestGapVolts: close(-0.01), changeVolts: close(-0.025), restChangeVolts: close(-0.04), previousSessionId: 's2', exceeds: true },
			{ groupId: 'd', endGapVolts: close(0.02), restGapVolts: close(0.0233333333), previousEndGapVolts: close(0.0116666667), previousRestGapVolts: close(0.01), changeVolts: close(0.0083333333), restChangeVolts: close(0.0133333333), previousSessionId: 's2', exceeds: false }
		]);
	});

	it('limit 20 mV: group 7 moved 25 mV away at the end and 40 mV at rest — one warning with both numbers in words', () => {
		const r = compare({ current, earlier, driftLimitVolts: 0.02, labels });
		expect(r.alerts).toHaveLength(1);
		const [a] = r.alerts;
		expect(a).toMatchObject({ kind: 'session-drift', severity: 'warning', groupId: 'c', threshold: 0.02 });
		expect(a.value).toBeCloseTo(-0.025, 9);
		expect(a.message).toBe(
			'Group 7 ended 40 mV below the others, 25 mV more than at the last full charge. At rest it sat 50 mV below them, 40 mV more than after the last full charge.'
		);
		expect(a.details).toMatchObject({ moment: 'end', previousSessionId: 's2' });
		expect(a.details.gapVolts).toBeCloseTo(-0.04, 9);
		expect(a.details.previousGapVolts).toBeCloseTo(-0.015, 9);
	});

	it('limit 30 mV (the default drift warning): the end moved 25 mV, not enough; the rest moved 40 mV', () => {
		const r = compare({ current, earlier, driftLimitVolts: 0.03, labels });
		expect(r.alerts.map((a) => [a.groupId, a.message])).toEqual([
			['c', 'At rest, group 7 sat 50 mV below the others, 40 mV more than after the last full charge.']
		]);
		expect(r.alerts[0].value).toBeCloseTo(-0.04, 9);
		expect(r.alerts[0].details.moment).toBe('rest');
	});

	it('limit 50 mV: nothing moved that far, no alert', () => {
		const r = compare({ current, earlier, driftLimitVolts: 0.05, labels });
		expect(r.alerts).toEqual([]);
		expect(r.groups.some((g) => g.exceeds)).toBe(false);
	});

	it('no earlier session with the same target: gaps reported, nothing to compare, no alert', () => {
		const r = compare({ current, earlier: earlier.filter((s) => s.target !== 'full'), driftLimitVolts: 0 });
		expect(r.alerts).toEqual([]);
		expect(r.groups.map((g) => [g.groupId, g.previousEndGapVolts, g.changeVolts, g.exceeds])).toEqual([
			['a', null, null, false],
			['b', null, null, false],
			['c', null, null, false],
			['d', null, null, false]
		]);
		expect(r.groups[2].endGapVolts).toBeCloseTo(-0.04, 9);
	});

	describe('three groups, storage target', () => {
		// Before: x 3.800 y 3.800 z 3.810 → z: 3.810 − 3.800 = +0.010 (above).
		const before: SessionSnapshot = { sessionId: 'p', endedAt: day('2026-11-01'), target: 'storage', endVolts: { x: 3.8, y: 3.8, z: 3.81 } };

		it('crossing to the other side: the message says where it was then', () => {
			// Now: z 3.760 → 3.760 − 3.800 = −0.040; change −0.050, |gap| grew from 10 to 40 mV.
			const now: SessionSnapshot = { sessionId: 'q', endedAt: day('2026-12-01'), target: 'storage', endVolts: { x: 3.8, y: 3.8, z: 3.76 } };
			const r = compare({ current: now, earlier: [before], driftLimitVolts: 0.03, labels: { z: '3' } });
			expect(r.alerts.map((a) => a.message)).toEqual([
				'Group 3 ended 40 mV below the others; at the last storage charge it was 10 mV above them.'
			]);
			expect(r.alerts[0].value).toBeCloseTo(-0.05, 9);
			// x and y: each 3.800 − (3.800 + 3.760)/2 = +0.020 now, 3.800 − 3.805 = −0.005 before: +0.025, under 30 mV.
			expect(r.groups[0].changeVolts).toBeCloseTo(0.025, 9);
		});

		it('coming back towards the others by more than the limit is no alert', () => {
			// Before z 3.740 → −0.060; now z 3.790 → −0.010; change +0.050, but |gap| shrank.
			const far = { ...before, endVolts: { x: 3.8, y: 3.8, z: 3.74 } };
			const now: SessionSnapshot = { sessionId: 'q', endedAt: day('2026-12-01'), target: 'storage', endVolts: { x: 3.8, y: 3.8, z: 3.79 } };
			const r = compare({ current: now, earlier: [far], driftLimitVolts: 0.03 });
			expect(r.alerts).toEqual([]);
			expect(r.groups[2]).toMatchObject({ groupId: 'z', exceeds: false, changeVolts: expect.closeTo(0.05, 9) });
		});

		it('a target named by voltage is "the last charge to the same target"; no label → the group id', () => {
			const v = (s: SessionSnapshot): SessionSnapshot => ({ ...s, target: 'volts:3.800' });
			const now: SessionSnapshot = { sessionId: 'q', endedAt: day('2026-12-01'), target: 'storage', endVolts: { x: 3.8, y: 3.8, z: 3.86 } };
			// z: 3.860 − 3.800 = +0.060 against +0.010: 50 mV more.
			const r = compare({ current: v(now), earlier: [v(before)], driftLimitVolts: 0.03 });
			expect(r.alerts.map((a) => a.message)).toEqual(['Group z ended 60 mV above the others, 50 mV more than at the last charge to the same target.']);
		});
	});

	it('groups missing a value are skipped; a group alone has no gap', () => {
		const r = compare({
			current: { sessionId: 'n', endedAt: day('2026-12-01'), target: 'full', endVolts: { a: 4.1, b: Number.NaN } },
			earlier: [],
			driftLimitVolts: 0.03
		});
		expect(r.groups).toEqual([
			{ groupId: 'a', endGapVolts: null, restGapVolts: null, previousEndGapVolts: null, previousRestGapVolts: null, changeVolts: null, restChangeVolts: null, previousSessionId: null, exceeds: false }
		]);
	});

	it('bad input is a failure, never a throw', () => {
		expect(compareSessions(null as never)).toMatchObject({ ok: false, reason: 'bad-input' });
		expect(compareSessions({ current, earlier, driftLimitVolts: Number.NaN })).toMatchObject({ ok: false, reason: 'bad-drift-limit' });
		expect(compareSessions({ current, earlier, driftLimitVolts: -0.01 })).toMatchObject({ ok: false, reason: 'bad-drift-limit' });
		expect(compareSessions({ current: { ...current, endedAt: new Date('x') }, earlier, driftLimitVolts: 0.03 })).toMatchObject({
			ok: false,
			reason: 'bad-current-session'
		});
		// Broken earlier snapshots are passed over.
		expect(compareSessions({ current, earlier: [null as never, { sessionId: 'z' } as never], driftLimitVolts: 0.03 })).toMatchObject({ ok: true, alerts: [] });
	});
});

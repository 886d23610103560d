import { describe, expect, it } from 'vitest';
import { chemistries, type WhatIfAlternative, type WhatIfOutcome } from '$lib/engine';
import { computeSessionPlan, type PlanCharger, type PlanPack, type SessionPlanInput } from './session-plan';
import { computeSessionWhatIf, whatIfSentence } from './session-what-if';

// Invented equipment and a 4S1P LFP pack; each expected sentence is worked by hand beside it from
// the step hours the session's own plan reports (checked first, so the working stands on them).
const HOUR = 3_600_000;
const T = '\u2009'; // the thin space between a number and its unit (look.md)
const pack: PlanPack = {
	series: 4,
	parallel: 1,
	chemistry: chemistries.lfp,
	cellCapacityAh: 105,
	cellMaxChargeAmps: 52.5,
	cellResistanceMilliOhms: null,
	bmsFitted: false,
	bmsBalanceAmps: null,
	groups: [1, 2, 3, 4].map((i) => ({ id: `g${i}`, index: i }))
};
const bench: PlanCharger = {
	id: 'bench',
	name: 'Bench supply',
	kind: 'bench-supply',
	channels: [{ id: 'b1', name: '', position: 1, maxVolts: 30, maxAmps: 10, maxWatts: null, balanceAmps: null, maxSeriesCells: null }]
};
const hobby: PlanCharger = {
	id: 'hobby',
	name: 'Four-channel charger',
	kind: 'multi-channel',
	channels: [1, 2, 3, 4].map((p) => ({ id: `h${p}`, name: `Channel ${p}`, position: p, maxVolts: 26, maxAmps: 8, maxWatts: 100, balanceAmps: 0.3, maxSeriesCells: 6 }))
};
const input: SessionPlanInput = {
	kind: 'one-at-a-time',
	target: 'full',
	chargerId: 'bench',
	channelIds: [],
	swapMinutes: 5,
	plannedStart: new Date('2026-07-01T06:00:00Z'), // 08:00 in Berlin (summer time, UTC+2)
	handsOn: { daily: [], once: [] },
	startVolts: { g1: 3.2, g2: 3.2, g3: 3.2, g4: 3.2 }
};
const ZONE = 'Europe/Berlin';

function stepHours(chargers: PlanCharger[], i: SessionPlanInput): number[] {
	const plan = computeSessionPlan(pack, chargers, i, ZONE);
	if (!plan.ok) throw new Error(plan.message);
	return plan.steps.map((s) => (s.expectedEnd.getTime() - s.expectedStart.getTime()) / HOUR);
}

describe('computeSessionWhatIf', () => {
	it('one group at a time on a 10 A bench supply → a second 10 A supply, in Berlin time', () => {
		// The plan: four equal steps of d = 9.706844 h, 5 min swaps between them.
		for (const h of stepHours([bench], input)) expect(h).toBeCloseTo(9.706844, 5);
		// One supply: 4d + 3 × 5 min = 39.077378 h from 08:00 Wed → 23:04:38 Thu 2 Jul → "23:05".
		// Two supplies: 2 groups each, 2d + 5 min = 19.497022 h → 03:29:49 Thu → "03:30".
		// Sooner by 39.077378 − 19.497022 = 19.580356 h = 19 h 34.8 min → "19 h 35 min".
		// Bound max(d, 4d / 2) = 2d = 19.413689 h → 03:24:49 Thu → "03:25".
		expect(computeSessionWhatIf(pack, [bench], input, ZONE)).toEqual({
			applies: true,
			lines: [
				{
					text: `With a second 10${T}A supply this session would end Thu 2 Jul, 03:30 instead of 23:05 (19${T}h 35${T}min sooner; it cannot end before 03:25 with two supplies).`,
					unattendedText: null,
					saves: true
				}
			]
		});
	});

	it('two of four channels → one more does not help, two more halve it', () => {
		const channels = { ...input, kind: 'channels' as const, chargerId: 'hobby', channelIds: ['h1', 'h2'] };
		// The plan: four equal steps of d = 12.009100 h at 8 A, two per channel, one 5 min swap each.
		for (const h of stepHours([hobby], channels)) expect(h).toBeCloseTo(12.0091, 5);
		// 2 channels: 2d + 5 min = 24.101534 h → 06:06:05Z Thu = 08:06 Berlin.
		// 3 channels: one channel still takes two groups — no sooner; bound 4d / 3 = 16.012134 h → 00:01 Thu.
		// 4 channels: one group each, d = 12.009100 h → 18:00:33Z Wed = 20:01 Berlin, 12.092434 h = 12 h 6 min
		// sooner, and d is also the bound max(d, 4d / 4).
		expect(computeSessionWhatIf(pack, [hobby], channels, ZONE)).toEqual({
			applies: true,
			lines: [
				{
					text: 'One more channel like these (3 in all) would not make this session end sooner than Thu 2 Jul, 08:06: the steps share out no better, or the hands-on hours decide when they can start (it cannot end before 00:01 with 3 channels).',
					unattendedText: null,
					saves: false
				},
				{
					text: `With two more channels like these (4 in all) this session would end Wed 1 Jul, 20:01 instead of Thu 2 Jul, 08:06 (12${T}h 6${T}min sooner; no plan with 4 channels can end sooner).`,
					unattendedText: null,
					saves: true
				}
			]
		});
	});

	it.each([
		['bulk-top-up', 'A whole-pack charge'],
		['bleed', 'A bleed'],
		['rest-check', 'A rest check']
	] as const)('says why %s has no what-if', (kind, start) => {
		const r = computeSessionWhatIf(pack, [bench], { ...input, kind, bleedLoad: { ohms: 2 }, restHours: 4 }, ZONE);
		expect(r).toMatchObject({ applies: false });
		expect(r && !r.applies && r.text.startsWith(`No equipment what-if here. ${start}`)).toBe(true);
	});

	it('gives nothing when there is no plan to compare with (no charger, a missing rest voltage)', () => {
		expect(computeSessionWhatIf(pack, [bench], { ...input, chargerId: null }, ZONE)).toBeNull();
		expect(computeSessionWhatIf(pack, [bench], { ...input, startVolts: { g1: 3.2 } }, ZONE)).toBeNull();
	});
});

describe('whatIfSentence', () => {
	const start = new Date('2026-12-03T06:00:00Z'); // Thu 07:00 in Berlin (winter time, UTC+1)
	const outcome = (hours: number, unattended: number): WhatIfOutcome => ({
		channels: 1,
		end: new Date(start.getTime() + hours * HOUR),
		totalHours: hours,
		lowerBoundHours: hours,
		unattendedChargeHours: unattended,
		unattendedHoldHours: 0,
		steps: []
	});

	it('names the hours with nobody there when they change, and dates a bound on another day', () => {
		const baseline = outcome(30, 10.5);
		// Ends 06:00Z + 20 h = 02:00Z Fri = 03:00 Berlin; the plan's 30 h ends 12:00Z Fri = 13:00 Berlin.
		// Bound 16.75 h → 22:45Z Thu = 23:45 Berlin, on the day before the alternative's end.
		const alt: WhatIfAlternative = { ...outcome(20, 2.25), channels: 2, lowerBoundHours: 16.75, addedChannels: 1, hoursSaved: 10, noGain: false };
		expect(whatIfSentence(baseline, alt, 'a second 10 A supply', 'two supplies', start, 'Europe/Berlin')).toEqual({
			text: `With a second 10 A supply this session would end Fri 4 Dec, 03:00 instead of 13:00 (10${T}h sooner; it cannot end before Thu 3 Dec, 23:45 with two supplies).`,
			unattendedText: `Hours with nobody there (charging or held at the set voltage): 2${T}h 15${T}min instead of 10${T}h 30${T}min.`,
			saves: true
		});
	});

	it('says "none" when the what-if has no hours with nobody there', () => {
		const alt: WhatIfAlternative = { ...outcome(20, 0), channels: 2, addedChannels: 1, hoursSaved: 10, noGain: false };
		expect(whatIfSentence(outcome(30, 0.5), alt, 'a second 10 A supply', 'two supplies', start, 'Europe/Berlin').unattendedText).toBe(
			`Hours with nobody there (charging or held at the set voltage): none instead of 30${T}min.`
		);
	});
});

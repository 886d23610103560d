import type { Channel } from './charge';
import type { PlanStep } from './plan-common';
import { planChannels, type ChannelsInput } from './plan-channels';
import { planOneAtATime, type OneAtATimeInput } from './plan-one';
import { makespanLowerBound } from './schedule';
import { MS_PER_HOUR, type Result } from './types';

/** A plan's end and cost in hours: the session as planned, or with more channels. */
export interface WhatIfOutcome {
	/** Channels (or supplies) charging groups side by side. */
	channels: number;
	end: Date;
	totalHours: number;
	/** max(longest step, total step hours / channels) — references.md §7: no plan on these channels ends sooner. */
	lowerBoundHours: number;
	/** Hours of steps that charge with nobody there, summed over steps. */
	unattendedChargeHours: number;
	/** Hours groups sit held at the set voltage with nobody there, summed over steps. */
	unattendedHoldHours: number;
	steps: PlanStep[];
}

export interface WhatIfAlternative extends WhatIfOutcome {
	/** Channels added to the plan's own (1 = a second supply for a one-at-a-time plan). */
	addedChannels: number;
	/** The plan's hours minus this one's (0 when the extra channel does not help). */
	hoursSaved: number;
	/** True when the extra channel cannot make the plan end sooner (the hands-on hours decide). */
	noGain: boolean;
}

export type EquipmentWhatIf =
	| { applies: true; baseline: WhatIfOutcome; alternatives: WhatIfAlternative[] }
	| { applies: false; why: string };

export type WhatIfInput =
	| { kind: 'one-at-a-time'; input: OneAtATimeInput }
	| { kind: 'channels'; input: ChannelsInput; /** Channels to add, each its own alternative; default [1, 2]. */ added?: number[] }
	| { kind: 'bulk' | 'bleed' | 'rest-check' };

/** Plans a second step ending within this much of another are the same (as the planners count). */
const SAME_MS = 1000;

function outcomeOf(steps: PlanStep[], startMs: number, endMs: number, channels: number): WhatIfOutcome {
	const durations = steps.map((s) => (s.end.getTime() - s.start.getTime()) / MS_PER_HOUR);
	return {
		channels,
		end: new Date(endMs),
		totalHours: (endMs - startMs) / MS_PER_HOUR,
		lowerBoundHours: makespanLowerBound(durations, channels),
		unattendedChargeHours: steps.reduce((h, s) => h + s.unattendedChargeHours, 0),
		unattendedHoldHours: steps.reduce((h, s) => h + s.unattendedHoldHours, 0),
		steps
	};
}

/** `count` copies of a channel's limits with ids not already taken. */
function extraChannels(like: Channel, taken: Set<string>, count: number): (Channel & { id: string })[] {
	const out: (Channel & { id: string })[] = [];
	for (let n = 1; out.length < count; n++) {
		const id = `what-if-${n}`;
		if (taken.has(id)) continue;
		out.push({ id, maxAmps: like.maxAmps, maxVolts: like.maxVolts, ...(like.maxWatts !== undefined ? { maxWatts: like.maxWatts } : {}) });
	}
	return out;
}

/**
 * The same groups, set voltage, swap minutes and hands-on hours on `channels` + k channels like the
 * first, for each k in `added`. A plan on fewer channels is still a plan on more (the extra ones
 * stand idle), so an alternative never ends later than the plan or than one with fewer channels:
 * when the channel planner's own answer would, the better plan is kept and `noGain` says so.
 */
function alternatives(base: ChannelsInput, baseline: WhatIfOutcome, added: number[]): WhatIfAlternative[] {
	const startMs = base.start.getTime();
	const taken = new Set(base.channels.map((c) => c.id));
	let best = baseline;
	const out: WhatIfAlternative[] = [];
	for (const k of [...new Set(added)].filter((a) => Number.isInteger(a) && a > 0).sort((a, b) => a - b)) {
		const channels = [...base.channels, ...extraChannels(base.channels[0], taken, k)];
		const plan = planChannels({ ...base, channels });
		const m = channels.length;
		let outcome: WhatIfOutcome;
		if (plan.ok && plan.end.getTime() <= best.end.getTime() + SAME_MS) {
			outcome = outcomeOf(plan.steps, startMs, plan.end.getTime(), m);
			// The planner's bound leaves out groups that need no step, as the steps do.
			outcome.lowerBoundHours = plan.lowerBoundHours;
		} else {
			outcome = { ...best, channels: m, lowerBoundHours: outcomeOf(best.steps, startMs, startMs, m).lowerBoundHours };
		}
		const hoursSaved = Math.max(0, baseline.totalHours - outcome.totalHours);
		out.push({ ...outcome, addedChannels: k, hoursSaved, noGain: hoursSaved * MS_PER_HOUR < SAME_MS });
		if (outcome.end.getTime() < best.end.getTime()) best = outcome;
	}
	return out;
}

/**
 * Equipment what-if: the same plan with one more supply (one group at a time → two supplies like
 * the first, same hands-on hours) or with one and two more channels of the same kind (several
 * channels), each with its end, hours saved, lower bound and hours with nobody there. A whole-pack
 * charge, a bleed and a rest check are not limited by channels: the answer says so. A plan that
 * cannot be made is the planner's own failure.
 */
export function equipmentWhatIf(what: WhatIfInput): Result<EquipmentWhatIf> {
	if (what.kind === 'one-at-a-time') {
		const plan = planOneAtATime(what.input);
		if (!plan.ok) return plan;
		const startMs = what.input.start.getTime();
		const baseline = outcomeOf(plan.steps, startMs, plan.end.getTime(), 1);
		const asChannels: ChannelsInput = { ...what.input, channels: [what.input.channel] };
		return { ok: true, applies: true, baseline, alternatives: alternatives(asChannels, baseline, [1]) };
	}
	if (what.kind === 'channels') {
		const plan = planChannels(what.input);
		if (!plan.ok) return plan;
		const startMs = what.input.start.getTime();
		const baseline = { ...outcomeOf(plan.steps, startMs, plan.end.getTime(), what.input.channels.length), lowerBoundHours: plan.lowerBoundHours };
		return { ok: true, applies: true, baseline, alternatives: alternatives(what.input, baseline, what.added ?? [1, 2]) };
	}
	const why =
		what.kind === 'bleed'
			? 'A bleed drains every group through its own load at once; more chargers would not shorten it.'
			: what.kind === 'rest-check'
				? 'A rest check only waits and reads; no charger is involved.'
				: 'A whole-pack charge runs through one pack charger; its length is set by the pack current, not by the number of channels.';
	return { ok: true, applies: false, why };
}

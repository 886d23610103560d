import type { Channel } from './charge';
import {
	checkBase,
	checkChannel,
	groupCharge,
	makeStep,
	NO_WINDOW_LEFT,
	stepWarnings,
	type CheckedBase,
	type GroupCharge,
	type Plan,
	type PlanInputBase,
	type PlanStep,
	type PlanWarning
} from './plan-common';
import { fail, MS_PER_HOUR, type Failure, type Result } from './types';

export interface OneAtATimeInput extends PlanInputBase {
	channel: Channel & { id: string };
}

type Chooser = (remaining: GroupCharge[], startMs: number) => number;

interface Sequence {
	steps: PlanStep[];
	endMs: number;
	holdHours: number;
	unattendedHours: number;
}

/** Runs the charges in the order a chooser picks; null when the hands-on hours run out. */
function runSequence(base: CheckedBase, channelId: string, charges: GroupCharge[], choose: Chooser): Sequence | null {
	const remaining = [...charges];
	const steps: PlanStep[] = [];
	let free = base.startMs;
	let holdHours = 0;
	let unattendedHours = 0;
	while (remaining.length > 0) {
		const startMs = base.presence.earliestStart(free, steps.length === 0 ? 0 : base.swapMs);
		if (startMs === null) return null;
		const [next] = remaining.splice(choose(remaining, startMs), 1);
		const made = makeStep(next.group.id, channelId, startMs, next.estimate, base.presence);
		if (!made) return null;
		steps.push(made.step);
		holdHours += made.step.unattendedHoldHours;
		unattendedHours += made.step.unattendedChargeHours;
		free = made.endMs;
	}
	return { steps, endMs: free, holdHours, unattendedHours };
}

/** Greedy: the step that leaves the least hold after it; ties to the longest (or shortest). */
function leastHold(base: CheckedBase, preferLong: boolean): Chooser {
	return (remaining, startMs) => {
		let best = 0;
		let bestHold = Infinity;
		let bestHours = 0;
		remaining.forEach((c, i) => {
			const hours = c.estimate.totalHours;
			const hold = base.presence.holdHoursAfter(startMs + hours * MS_PER_HOUR) ?? Infinity;
			const tie = Math.abs(hold - bestHold) < 1 / 60;
			if (hold < bestHold - 1 / 60 || (tie && (preferLong ? hours > bestHours : hours < bestHours))) {
				best = i;
				bestHold = Math.min(hold, bestHold);
				bestHours = hours;
			}
		});
		return best;
	};
}

const inOrder: Chooser = () => 0;

function better(a: Sequence, b: Sequence): boolean {
	const second = 1000;
	if (a.endMs < b.endMs - second) return true;
	if (a.endMs > b.endMs + second) return false;
	if (a.holdHours < b.holdHours - 1e-6) return true;
	if (a.holdHours > b.holdHours + 1e-6) return false;
	return a.unattendedHours < b.unattendedHours - 1e-6;
}

/** Plans the charges of prepared groups one at a time on one channel (shared with the bulk top-up). */
export function sequenceOneAtATime(
	base: CheckedBase,
	channelId: string,
	charges: GroupCharge[],
	alwaysPresent: boolean
): Sequence | Failure {
	const byLongest = [...charges].sort((a, b) => b.estimate.totalHours - a.estimate.totalHours);
	const byShortest = [...byLongest].reverse();
	const candidates: [GroupCharge[], Chooser][] = [[charges, inOrder]];
	if (!alwaysPresent) {
		candidates.push(
			[byLongest, inOrder],
			[byShortest, inOrder],
			[charges, leastHold(base, false)],
			[charges, leastHold(base, true)]
		);
	}
	let best: Sequence | null = null;
	for (const [list, choose] of candidates) {
		const seq = runSequence(base, channelId, list, choose);
		if (seq && (!best || better(seq, best))) best = seq;
	}
	return best ?? NO_WINDOW_LEFT;
}

/**
 * One group at a time from one supply: steps start only in hands-on windows; a step ending with
 * nobody there holds the group at the set voltage until the next window (unattendedHoldHours) and
 * warns. The order is the best of a few heuristics (input order, longest/shortest first, least hold).
 */
export function planOneAtATime(input: OneAtATimeInput): Result<Plan> {
	const base = checkBase(input);
	if ('ok' in base) return base;
	const channelFailure = checkChannel(input.channel);
	if (channelFailure) return channelFailure;
	if (input.channel.id === undefined) return fail('invalid-channel', 'The channel needs an id.');
	const charges: GroupCharge[] = [];
	const warnings: PlanWarning[] = [];
	for (const g of base.groups) {
		const charge = groupCharge(base.chem, g, input.channel, input.setVolts, input.amps, input.terminationAmps);
		if ('ok' in charge) return charge;
		if (charge.estimate.totalHours <= 1e-9) {
			warnings.push({ code: 'no-charge-needed', groupId: g.id, message: `Group ${g.id} is already at the set voltage's end state; it needs no step.` });
		} else charges.push(charge);
	}
	const seq = sequenceOneAtATime(base, input.channel.id, charges, input.handsOn === undefined);
	if ('ok' in seq) return seq;
	const endMs = Math.max(base.startMs, seq.endMs);
	return {
		ok: true,
		steps: seq.steps,
		end: new Date(endMs),
		totalHours: (endMs - base.startMs) / MS_PER_HOUR,
		warnings: [...stepWarnings(base.chem, input.setVolts, seq.steps), ...warnings]
	};
}

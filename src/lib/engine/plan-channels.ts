import type { Channel } from './charge';
import {
	checkBase,
	checkChannel,
	groupCharge,
	makeStep,
	NO_WINDOW_LEFT,
	stepWarnings,
	type GroupCharge,
	type Plan,
	type PlanInputBase,
	type PlanStep,
	type PlanWarning
} from './plan-common';
import { makespanLowerBound } from './schedule';
import { fail, MS_PER_HOUR, type Result } from './types';

/** Up to this many groups the longest-first plan is improved by moves and swaps between channels. */
const IMPROVE_MAX_GROUPS = 64;
const IMPROVE_MAX_ROUNDS = 200;

export interface ChannelsInput extends PlanInputBase {
	channels: (Channel & { id: string })[];
}

export interface ChannelsPlan extends Plan {
	/** max(longest step, total step hours / channels): no plan on these channels finishes sooner. */
	lowerBoundHours: number;
}

interface Lane {
	steps: PlanStep[];
	endMs: number;
	holdHours: number;
}

/**
 * Isolated channels in parallel: groups longest first, each to the channel where it would finish
 * first (with identical channels and no hands-on limits, the channel that frees first: Graham's
 * 4/3 − 1/(3m) bound), then moves and swaps between channels while they shorten the plan.
 */
export function planChannels(input: ChannelsInput): Result<ChannelsPlan> {
	const base = checkBase(input);
	if ('ok' in base) return base;
	if (!Array.isArray(input.channels) || input.channels.length === 0) return fail('no-channels', 'At least one channel is needed.');
	const channelIds = new Set<string>();
	for (const c of input.channels) {
		const failure = checkChannel(c);
		if (failure) return failure;
		if (c.id === undefined || channelIds.has(c.id)) return fail('invalid-channel', 'Every channel needs its own id.');
		channelIds.add(c.id);
	}
	const channels = input.channels;
	const warnings: PlanWarning[] = [];
	// charges[g][c]: the group's charge on that channel, or null when the channel cannot charge it.
	const charges: (GroupCharge | null)[][] = [];
	const best: number[] = [];
	// Channels with the same limits give the same charge: estimate once per distinct channel.
	const specOf = (c: (typeof channels)[number]) => `${c.maxAmps}|${c.maxVolts}|${c.maxWatts ?? ''}`;
	for (const g of base.groups) {
		const bySpec = new Map<string, GroupCharge | null>();
		const row = channels.map((c) => {
			const key = specOf(c);
			if (!bySpec.has(key)) {
				const charge = groupCharge(base.chem, g, c, input.setVolts, input.amps, input.terminationAmps);
				bySpec.set(key, 'ok' in charge ? null : charge);
			}
			return bySpec.get(key) ?? null;
		});
		const hours = row.map((c) => (c ? c.estimate.totalHours : Infinity));
		const min = Math.min(...hours);
		if (!Number.isFinite(min)) {
			const reason = groupCharge(base.chem, g, channels[0], input.setVolts, input.amps, input.terminationAmps);
			return 'ok' in reason ? reason : fail('no-channel-fits', `No channel can charge group ${g.id}.`);
		}
		if (min <= 1e-9) {
			warnings.push({ code: 'no-charge-needed', groupId: g.id, message: `Group ${g.id} is already at the set voltage's end state; it needs no step.` });
			continue;
		}
		charges.push(row);
		best.push(min);
	}
	const n = charges.length;
	const m = channels.length;
	const hoursOf = (g: number, c: number) => charges[g][c]?.estimate.totalHours ?? Infinity;

	const lane = (c: number, list: number[]): Lane | null => {
		const steps: PlanStep[] = [];
		let free = base.startMs;
		let holdHours = 0;
		for (const g of list) {
			const charge = charges[g][c];
			if (!charge) return null;
			const startMs = base.presence.earliestStart(free, steps.length === 0 ? 0 : base.swapMs);
			if (startMs === null) return null;
			const made = makeStep(charge.group.id, channels[c].id, startMs, charge.estimate, base.presence);
			if (!made) return null;
			steps.push(made.step);
			holdHours += made.step.unattendedHoldHours;
			free = made.endMs;
		}
		return { steps, endMs: free, holdHours };
	};

	// Longest first, each to the channel where it finishes first.
	const order = best.map((_, g) => g).sort((a, b) => best[b] - best[a] || a - b);
	const lists: number[][] = channels.map(() => []);
	const free: number[] = channels.map(() => base.startMs);
	for (const g of order) {
		let pick = -1;
		let pickEnd = Infinity;
		for (let c = 0; c < m; c++) {
			const charge = charges[g][c];
			if (!charge) continue;
			const s = base.presence.earliestStart(free[c], lists[c].length === 0 ? 0 : base.swapMs);
			if (s === null) continue;
			const e = s + charge.estimate.totalHours * MS_PER_HOUR;
			if (e < pickEnd) {
				pickEnd = e;
				pick = c;
			}
		}
		if (pick < 0) return NO_WINDOW_LEFT;
		lists[pick].push(g);
		free[pick] = pickEnd;
	}
	let lanes = lists.map((l, c) => lane(c, l));
	if (lanes.some((l) => l === null)) return NO_WINDOW_LEFT;

	if (n <= IMPROVE_MAX_GROUPS && m > 1) {
		lanes = improve(lists, lanes as Lane[], lane, hoursOf);
	}
	const done = lanes as Lane[];
	const steps = done.flatMap((l) => l.steps).sort((a, b) => a.start.getTime() - b.start.getTime());
	const endMs = Math.max(base.startMs, ...done.map((l) => l.endMs));
	return {
		ok: true,
		steps,
		end: new Date(endMs),
		totalHours: (endMs - base.startMs) / MS_PER_HOUR,
		lowerBoundHours: makespanLowerBound(best, m),
		warnings: [...stepWarnings(base.chem, input.setVolts, steps), ...warnings]
	};
}

/** Moves and swaps involving the channel that ends last, while the plan's end (then total hold) improves. */
function improve(
	lists: number[][],
	lanes: Lane[],
	lane: (c: number, list: number[]) => Lane | null,
	hoursOf: (g: number, c: number) => number
): Lane[] {
	const m = lists.length;
	const sortList = (c: number, list: number[]) => list.sort((a, b) => hoursOf(b, c) - hoursOf(a, c) || a - b);
	const score = (ls: Lane[]) => [Math.max(...ls.map((l) => l.endMs)), ls.reduce((s, l) => s + l.holdHours, 0)];
	const isBetter = (a: number[], b: number[]) => a[0] < b[0] - 1000 || (Math.abs(a[0] - b[0]) <= 1000 && a[1] < b[1] - 1e-6);
	for (let round = 0; round < IMPROVE_MAX_ROUNDS; round++) {
		const current = score(lanes);
		let crit = 0;
		for (let c = 1; c < m; c++) if (lanes[c].endMs > lanes[crit].endMs) crit = c;
		let bestScore = current;
		let bestChange: { lists: [number, number[]][]; lanes: [number, Lane][] } | null = null;
		const consider = (c: number, critList: number[], otherList: number[]) => {
			const a = lane(crit, sortList(crit, critList));
			const b = lane(c, sortList(c, otherList));
			if (!a || !b) return;
			const trial = lanes.map((l, i) => (i === crit ? a : i === c ? b : l));
			const s = score(trial);
			if (isBetter(s, bestScore)) {
				bestScore = s;
				bestChange = { lists: [[crit, critList], [c, otherList]], lanes: [[crit, a], [c, b]] };
			}
		};
		for (let c = 0; c < m; c++) {
			if (c === crit) continue;
			for (let i = 0; i < lists[crit].length; i++) {
				const g = lists[crit][i];
				if (!Number.isFinite(hoursOf(g, c))) continue;
				consider(c, lists[crit].filter((_, k) => k !== i), [...lists[c], g]);
				for (let j = 0; j < lists[c].length; j++) {
					const h = lists[c][j];
					if (!Number.isFinite(hoursOf(h, crit))) continue;
					consider(
						c,
						lists[crit].map((x, k) => (k === i ? h : x)),
						lists[c].map((x, k) => (k === j ? g : x))
					);
				}
			}
		}
		if (!bestChange) break;
		const change = bestChange as { lists: [number, number[]][]; lanes: [number, Lane][] };
		for (const [c, l] of change.lists) lists[c] = l;
		lanes = lanes.map((l, i) => change.lanes.find(([c]) => c === i)?.[1] ?? l);
	}
	return lanes;
}

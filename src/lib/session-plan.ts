/**
 * A session's plan from what the planner chose: the plan form's values → the engine's input
 * (groups, channels, hands-on windows in the workshop's zone) → the engine's plan → steps in our
 * own terms. Client-safe: the plan screen runs it on every change (no round trip) and the server
 * runs the same code on save, so the saved plan is the server's.
 */
import {
	chargeAmps,
	defaultLimits,
	planBleed,
	planBulk,
	planChannels,
	planOneAtATime,
	resolveChemistry,
	socFromRestVoltage,
	PACK_STEP_ID,
	type Channel,
	type Chemistry,
	type HandsOnWindow,
	type Limits,
	type PlanGroup,
	type PlanStep,
	type PlanWarning
} from '$lib/engine';
import { handsOnWindows, type DailyWindow } from '$lib/hands-on';

export const sessionKinds = ['one-at-a-time', 'channels', 'bulk-top-up', 'bulk-bms', 'bleed', 'rest-check'] as const;
export type SessionKind = (typeof sessionKinds)[number];

export const sessionKindLabels: Record<SessionKind, string> = {
	'one-at-a-time': 'One group at a time',
	channels: 'Several channels at once',
	'bulk-top-up': 'Whole pack, then top up groups',
	'bulk-bms': 'Whole pack with its BMS balancing',
	bleed: 'Bleed groups down',
	'rest-check': 'Rest check (readings only)'
};

export const sessionTargets = ['full', 'storage', 'volts'] as const;
export type SessionTarget = (typeof sessionTargets)[number];

/** The pack as the planner sees it: groups 1..S, each P cells of the spec. */
export type PlanPack = {
	series: number;
	parallel: number;
	chemistry: Chemistry;
	cellCapacityAh: number;
	cellMaxChargeAmps: number;
	cellResistanceMilliOhms: number | null;
	bmsFitted: boolean;
	bmsBalanceAmps: number | null;
	/** The pack's groups by index (1..S); ids are the database's. */
	groups: { id: string; index: number }[];
};

export type PlanChannel = {
	id: string;
	name: string;
	position: number;
	maxVolts: number;
	maxAmps: number;
	maxWatts: number | null;
	balanceAmps: number | null;
	maxSeriesCells: number | null;
};

export type PlanCharger = {
	id: string;
	name: string;
	kind: 'bench-supply' | 'multi-channel' | 'pack-charger';
	channels: PlanChannel[];
};

export type HandsOnInput = {
	/** Daily windows in the workshop's zone, 'HH:MM' (a night watch 22:00–07:00 crosses midnight). */
	daily: DailyWindow[];
	/** One-off windows, ISO 8601 instants. */
	once: { start: string; end: string }[];
};

/** What the planner chose (the plan form's values, also what the server stores). */
export type SessionPlanInput = {
	kind: SessionKind;
	target: SessionTarget;
	/** Volts per cell for target 'volts' (charge to it; a bleed drains to it). */
	targetVolts?: number | null;
	/** Requested amps per step; absent = as much as channel and group rating allow. */
	amps?: number | null;
	/** The charger whose channels the charge uses (bulk: the pack charger). */
	chargerId?: string | null;
	/** Channels of that charger to use; empty = all of them (one-at-a-time: the first). */
	channelIds: string[];
	/** Bulk without BMS: the channel (of any charger) for the top-up steps. */
	topUpChannelId?: string | null;
	bleedLoad?: { ohms: number } | { amps: number } | null;
	/** Rest check: how long the pack rests, hours. */
	restHours?: number | null;
	swapMinutes: number;
	plannedStart: Date;
	handsOn: HandsOnInput;
	/** The groups' start state: group id → rest volts per cell (missing = the lowest plausible guess is refused; give one). */
	startVolts: Record<string, number>;
};

export type PlannedStep = {
	position: number;
	/** null = the whole pack in series. */
	groupId: string | null;
	/** 1..S, or null for the whole pack. */
	groupIndex: number | null;
	channelId: string | null;
	channelLabel: string;
	role: 'charge' | 'top-up' | 'balance' | 'bleed' | 'rest';
	/** Set volts of the supply for this step: per cell × groups in series on the channel. */
	setVolts: number | null;
	amps: number | null;
	expectedStart: Date;
	expectedEnd: Date;
	preHours: number;
	ccHours: number;
	cvHours: number;
	ah: number;
	unattendedChargeHours: number;
	unattendedHoldHours: number;
};

/** An hour span in which a group charges or sits at its set voltage with nobody there. */
export type UnattendedSpan = {
	groupIndex: number | null;
	what: 'charging' | 'held at set voltage' | 'bleeding';
	start: Date;
	end: Date;
	hours: number;
};

export type BulkSummary = {
	bulkHours: number;
	firstFullGroupIndex: number;
	groupsAtStop: { groupIndex: number; soc: number; restVolts: number; deficitAh: number }[];
	topUpHours: number | null;
	balanceHours: number | null;
	packAmps: number;
};

export type SessionPlan = {
	ok: true;
	/** Set volts per cell (null for a bleed or a rest check). */
	setVoltsPerCell: number | null;
	steps: PlannedStep[];
	start: Date;
	end: Date;
	totalHours: number;
	/** Channel plans: no plan on these channels finishes sooner. */
	lowerBoundHours: number | null;
	warnings: PlanWarning[];
	unattended: UnattendedSpan[];
	bulk: BulkSummary | null;
	/** The default limits for this chemistry and set voltage (the planner may tighten them). */
	defaultLimits: Limits;
};

export type SessionPlanFailure = { ok: false; reason: string; message: string };

const MS_PER_HOUR = 3_600_000;
/** Hands-on windows are laid out this many days ahead of the start (longer plans fail plainly). */
export const PLAN_HORIZON_DAYS = 60;
/** A plan longer than this is refused: no charge, rest or bleed on a bench takes years. */
export const PLAN_MAX_YEARS = 10;
const HOURS_PER_YEAR = 8766; // 365.25 days

function fail(reason: string, message: string): SessionPlanFailure {
	return { ok: false, reason, message };
}

/** Set volts per cell for a target; null for a bleed or a rest check. */
export function setVoltsFor(chem: Chemistry, kind: SessionKind, target: SessionTarget, targetVolts?: number | null): number | null {
	if (kind === 'bleed' || kind === 'rest-check') return null;
	if (target === 'full') return chem.maxChargeVolts;
	if (target === 'storage') return chem.storageVolts;
	return targetVolts ?? null;
}

/** Absolute hands-on windows for the plan, or null when none were given (someone there throughout). */
export function windowsFor(
	handsOn: HandsOnInput,
	timeZone: string,
	start: Date
): { ok: true; windows: HandsOnWindow[] | null } | SessionPlanFailure {
	const windows: HandsOnWindow[] = [];
	if (handsOn.daily.length > 0) {
		// From the day before, so a night watch that began yesterday evening counts.
		const from = new Date(start.getTime() - 24 * MS_PER_HOUR);
		const daily = handsOnWindows(handsOn.daily, timeZone, from, PLAN_HORIZON_DAYS + 1);
		if (!daily.ok) return fail('invalid-hands-on', daily.message);
		windows.push(...daily.windows);
	}
	for (const w of handsOn.once) {
		const s = new Date(w.start);
		const e = new Date(w.end);
		if (!Number.isFinite(s.getTime()) || !Number.isFinite(e.getTime()) || e <= s) {
			return fail('invalid-hands-on', 'Each one-off hands-on window needs a start before its end.');
		}
		windows.push({ start: s, end: e });
	}
	return { ok: true, windows: windows.length === 0 ? null : windows };
}

export function channelOf(c: PlanChannel): Channel & { id: string } {
	return { id: c.id, maxAmps: c.maxAmps, maxVolts: c.maxVolts, ...(c.maxWatts ? { maxWatts: c.maxWatts } : {}) };
}

function channelLabel(charger: PlanCharger, c: PlanChannel): string {
	return charger.channels.length > 1 ? `${charger.name}, ${c.name || `channel ${c.position}`}` : charger.name;
}

/** Spans of a step with nobody there: while it charges, and after it while the group is held. */
export function unattendedSpans(step: PlannedStep, windows: HandsOnWindow[] | null): UnattendedSpan[] {
	if (windows === null) return [];
	const out: UnattendedSpan[] = [];
	const sorted = [...windows].sort((a, b) => a.start.getTime() - b.start.getTime());
	const gaps = (a: number, b: number, what: UnattendedSpan['what']) => {
		let t = a;
		for (const w of sorted) {
			const ws = w.start.getTime();
			const we = w.end.getTime();
			if (we <= t) continue;
			if (ws >= b) break;
			if (ws > t) out.push({ groupIndex: step.groupIndex, what, start: new Date(t), end: new Date(ws), hours: (ws - t) / MS_PER_HOUR });
			t = Math.max(t, we);
			if (t >= b) break;
		}
		if (t < b) out.push({ groupIndex: step.groupIndex, what, start: new Date(t), end: new Date(b), hours: (b - t) / MS_PER_HOUR });
	};
	const s = step.expectedStart.getTime();
	const e = step.expectedEnd.getTime();
	if (step.unattendedChargeHours > 1e-9) gaps(s, e, step.role === 'bleed' ? 'bleeding' : 'charging');
	if (step.unattendedHoldHours > 1e-9) gaps(e, e + step.unattendedHoldHours * MS_PER_HOUR, 'held at set voltage');
	return out.filter((u) => u.hours > 1e-6);
}

/** Engine group ids are the group numbers ("7"), so the engine's own warnings read "Group 7". */
const engineId = (index: number) => String(index);

/** The pack's groups as the engine plans them (ids are the group numbers), from their rest volts. */
export function planGroupsFor(pack: PlanPack, startVolts: Record<string, number>): PlanGroup[] | SessionPlanFailure {
	const groupCapacity = pack.parallel * pack.cellCapacityAh;
	const planGroups: PlanGroup[] = [];
	for (const g of [...pack.groups].sort((a, b) => a.index - b.index)) {
		const volts = startVolts[g.id];
		if (volts === undefined || !Number.isFinite(volts)) {
			return fail('missing-start-volts', `Group ${g.index} needs its rest voltage to plan from.`);
		}
		planGroups.push({
			id: engineId(g.index),
			capacityAh: groupCapacity,
			startVolts: volts,
			maxChargeAmps: pack.parallel * pack.cellMaxChargeAmps,
			...(pack.cellResistanceMilliOhms ? { resistanceOhms: pack.cellResistanceMilliOhms / 1000 / pack.parallel } : {})
		});
	}
	return planGroups;
}

/**
 * The plan for a session, or a failure in plain words. `chargers` are the workshop's (the top-up
 * channel may be on another charger than the pack charger).
 */
export function computeSessionPlan(
	pack: PlanPack,
	chargers: PlanCharger[],
	input: SessionPlanInput,
	timeZone: string
): SessionPlan | SessionPlanFailure {
	const chem = resolveChemistry(pack.chemistry);
	if ('ok' in chem) return fail(chem.reason, chem.detail ?? 'The chemistry is not usable.');
	const start = input.plannedStart;
	if (!(start instanceof Date) || !Number.isFinite(start.getTime())) return fail('invalid-start', 'Choose when the session starts.');
	const groups = [...pack.groups].sort((a, b) => a.index - b.index);
	if (groups.length === 0) return fail('no-groups', 'The pack has no groups yet.');
	const byIndex = new Map(groups.map((g) => [engineId(g.index), g]));
	const planGroups = planGroupsFor(pack, input.startVolts);
	if (!Array.isArray(planGroups)) return planGroups;
	const setVolts = setVoltsFor(chem, input.kind, input.target, input.targetVolts);
	const limitsVolts = setVolts ?? chem.maxChargeVolts;
	const limits = defaultLimits(chem, limitsVolts);
	if (!limits.ok) return fail(limits.reason, limits.detail ?? 'The set voltage does not suit this chemistry.');
	const { ok: _ok, ...defaults } = limits;
	const win = windowsFor(input.handsOn, timeZone, start);
	if (!win.ok) return win;
	const handsOn = win.windows ?? undefined;
	const warnings: PlanWarning[] = [];
	if (win.windows === null && input.kind !== 'rest-check') {
		warnings.push({
			code: 'no-hands-on-hours',
			message:
				'No hands-on hours were given, so this plan assumes someone awake at the bench from start to end. Add the hours when someone is really there (a night watch counts) to see which steps would run with nobody there.'
		});
	}
	const base = {
		chemistry: chem,
		groups: planGroups,
		start,
		swapMinutes: input.swapMinutes,
		...(handsOn ? { handsOn } : {}),
		...(input.amps ? { amps: input.amps } : {})
	};
	const groupOf = (id: string) => (id === PACK_STEP_ID ? null : (byIndex.get(id) ?? null));
	const findCharger = (id: string | null | undefined) => chargers.find((c) => c.id === id) ?? null;
	const channelById = (id: string | null | undefined) => {
		for (const c of chargers) for (const ch of c.channels) if (ch.id === id) return { charger: c, channel: ch };
		return null;
	};
	const ampsOn = (ch: PlanChannel, seriesOnChannel: number, groupAmps: number) => {
		const a = chargeAmps({
			channel: channelOf(ch),
			groupMaxChargeAmps: groupAmps,
			setVolts: setVolts ?? chem.maxChargeVolts,
			seriesOnChannel,
			...(input.amps ? { requestedAmps: input.amps } : {})
		});
		return a.ok ? a.amps : null;
	};
	const toSteps = (
		planSteps: PlanStep[],
		role: PlannedStep['role'],
		labelOf: (channelId: string) => { label: string; channel: PlanChannel | null },
		first = 1
	): PlannedStep[] =>
		planSteps.map((s, i) => {
			const group = groupOf(s.groupId);
			const { label, channel } = labelOf(s.channelId);
			const series = group ? 1 : pack.series;
			return {
				position: first + i,
				groupId: group?.id ?? null,
				groupIndex: group?.index ?? null,
				channelId: channel?.id ?? null,
				channelLabel: label,
				role,
				setVolts: setVolts === null ? null : Math.round(setVolts * series * 1000) / 1000,
				amps: channel ? ampsOn(channel, series, pack.parallel * pack.cellMaxChargeAmps) : null,
				expectedStart: s.start,
				expectedEnd: s.end,
				preHours: s.preHours,
				ccHours: s.ccHours,
				cvHours: s.cvHours,
				ah: s.ahIn,
				unattendedChargeHours: s.unattendedChargeHours,
				unattendedHoldHours: s.unattendedHoldHours
			};
		});
	const labelFrom = (charger: PlanCharger) => (channelId: string) => {
		const ch = charger.channels.find((c) => c.id === channelId) ?? null;
		return { label: ch ? channelLabel(charger, ch) : charger.name, channel: ch };
	};

	let steps: PlannedStep[] = [];
	let lowerBoundHours: number | null = null;
	let bulk: BulkSummary | null = null;

	if (input.kind === 'rest-check') {
		const hours = input.restHours ?? 0;
		if (!(hours > 0)) return fail('invalid-rest-hours', 'Say how many hours the pack rests.');
		const end = new Date(start.getTime() + hours * MS_PER_HOUR);
		steps = [
			{
				position: 1,
				groupId: null,
				groupIndex: null,
				channelId: null,
				channelLabel: 'No charger',
				role: 'rest',
				setVolts: null,
				amps: null,
				expectedStart: start,
				expectedEnd: end,
				preHours: 0,
				ccHours: 0,
				cvHours: 0,
				ah: 0,
				unattendedChargeHours: 0,
				unattendedHoldHours: 0
			}
		];
	} else if (input.kind === 'bleed') {
		const load = input.bleedLoad;
		if (!load) return fail('invalid-load', 'Give the bleed resistor in ohms or the load current in amps.');
		const target = input.target === 'volts' && input.targetVolts ? { volts: input.targetVolts } : input.target === 'storage' ? { volts: chem.storageVolts } : ('lowest' as const);
		const plan = planBleed({ ...base, target, load });
		if (!plan.ok) return fail(plan.reason, plan.detail ?? 'The bleed cannot be planned.');
		warnings.push(...plan.warnings);
		steps = plan.steps.map((s, i) => {
			const group = groupOf(s.groupId);
			return {
				position: i + 1,
				groupId: group?.id ?? null,
				groupIndex: group?.index ?? null,
				channelId: null,
				channelLabel: 'ohms' in load ? `${load.ohms} Ω resistor` : `${load.amps} A load`,
				role: 'bleed' as const,
				setVolts: null,
				amps: s.amps,
				expectedStart: s.start,
				expectedEnd: s.end,
				preHours: 0,
				ccHours: 0,
				cvHours: 0,
				ah: s.ahOut,
				unattendedChargeHours: s.unattendedChargeHours,
				unattendedHoldHours: s.unattendedHoldHours
			};
		});
	} else if (input.kind === 'one-at-a-time' || input.kind === 'channels') {
		const charger = findCharger(input.chargerId);
		if (!charger) return fail('no-charger', 'Choose the charger.');
		const chosen = input.channelIds.length > 0 ? charger.channels.filter((c) => input.channelIds.includes(c.id)) : charger.channels;
		if (chosen.length === 0) return fail('no-channels', 'Choose at least one channel of the charger.');
		if (input.kind === 'one-at-a-time') {
			const plan = planOneAtATime({ ...base, setVolts: setVolts as number, channel: channelOf(chosen[0]) });
			if (!plan.ok) return fail(plan.reason, plan.detail ?? 'The plan cannot be made.');
			warnings.push(...plan.warnings);
			steps = toSteps(plan.steps, 'charge', labelFrom(charger));
		} else {
			const plan = planChannels({ ...base, setVolts: setVolts as number, channels: chosen.map(channelOf) });
			if (!plan.ok) return fail(plan.reason, plan.detail ?? 'The plan cannot be made.');
			warnings.push(...plan.warnings);
			lowerBoundHours = plan.lowerBoundHours;
			steps = toSteps(plan.steps, 'charge', labelFrom(charger));
		}
	} else {
		const charger = findCharger(input.chargerId);
		if (!charger || charger.channels.length === 0) return fail('no-charger', 'Choose the pack charger.');
		const packChannel = (input.channelIds.length > 0 ? charger.channels.find((c) => input.channelIds.includes(c.id)) : null) ?? charger.channels[0];
		const withBms = input.kind === 'bulk-bms';
		if (withBms && !(pack.bmsBalanceAmps && pack.bmsBalanceAmps > 0)) {
			return fail('no-bms-balance', "Give the BMS's balance current on the pack's page first.");
		}
		const topUp = withBms ? null : channelById(input.topUpChannelId);
		const plan = planBulk({
			...base,
			setVolts: setVolts as number,
			packCharger: channelOf(packChannel),
			...(withBms ? { bms: { balanceAmps: pack.bmsBalanceAmps as number } } : {}),
			...(topUp ? { topUpChannel: channelOf(topUp.channel) } : {})
		});
		if (!plan.ok) return fail(plan.reason, plan.detail ?? 'The plan cannot be made.');
		warnings.push(...plan.warnings);
		const packLabel = { label: channelLabel(charger, packChannel), channel: packChannel };
		const packSteps = plan.steps.filter((s) => s.groupId === PACK_STEP_ID);
		steps = toSteps(packSteps, 'charge', () => packLabel);
		if (plan.topUp && topUp) {
			steps.push(...toSteps(plan.topUp.steps, 'top-up', labelFrom(topUp.charger), steps.length + 1));
		}
		if (plan.balanceHours !== undefined && plan.balanceHours > 0 && steps.length > 0) {
			const from = steps[steps.length - 1].expectedEnd;
			const end = new Date(from.getTime() + plan.balanceHours * MS_PER_HOUR);
			steps.push({
				position: steps.length + 1,
				groupId: null,
				groupIndex: null,
				channelId: null,
				channelLabel: 'BMS balancing',
				role: 'balance',
				setVolts: null,
				amps: pack.bmsBalanceAmps,
				expectedStart: from,
				expectedEnd: end,
				preHours: 0,
				ccHours: 0,
				cvHours: 0,
				ah: 0,
				unattendedChargeHours: 0,
				unattendedHoldHours: 0
			});
		}
		bulk = {
			bulkHours: plan.bulkHours,
			firstFullGroupIndex: Number(plan.firstFullGroupId),
			groupsAtStop: plan.groupsAtStop.map((g) => ({ groupIndex: Number(g.groupId), soc: g.soc, restVolts: g.restVolts, deficitAh: g.deficitAh })),
			topUpHours: plan.topUp ? plan.topUp.totalHours : null,
			balanceHours: plan.balanceHours ?? null,
			packAmps: plan.amps
		};
	}

	// A current the inputs allow but no charge can use (a channel or a requested current of 5e-324 A,
	// still "more than 0") puts step times past any calendar: refused in words, never stored as a date.
	const tooLong = (d: Date) => !Number.isFinite(d.getTime()) || d.getTime() - start.getTime() > PLAN_MAX_YEARS * HOURS_PER_YEAR * MS_PER_HOUR;
	if (steps.some((s) => tooLong(s.expectedStart) || tooLong(s.expectedEnd))) {
		return fail(
			'too-long',
			`At these currents the plan would run for more than ${PLAN_MAX_YEARS} years. Choose a higher current, another channel or a smaller bleed resistor.`
		);
	}
	const end = steps.reduce((t, s) => (s.expectedEnd > t ? s.expectedEnd : t), start);
	const unattended = steps.flatMap((s) => unattendedSpans(s, win.windows));
	return {
		ok: true,
		setVoltsPerCell: setVolts,
		steps,
		start,
		end,
		totalHours: (end.getTime() - start.getTime()) / MS_PER_HOUR,
		lowerBoundHours,
		warnings,
		unattended,
		bulk,
		defaultLimits: defaults
	};
}

/** A group's start state in words for the form: its SoC from rest volts (flat curves say so). */
export function startSocText(chem: Chemistry, volts: number): string {
	const r = socFromRestVoltage(chem, volts);
	if (!r.ok) return '';
	const pct = Math.round(r.soc * 100);
	const low = Math.round(r.socLow * 100);
	const high = Math.round(r.socHigh * 100);
	// ±10 mV of meter error moves LFP's reading across its plateau: say the range then.
	return high - low >= 15 ? `somewhere ${low}–${high} % (a flat curve: rest volts say little here)` : `about ${pct} %`;
}

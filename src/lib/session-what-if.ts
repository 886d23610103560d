/**
 * The plan screen's equipment what-if: the session's own plan input → the engine's what-if (one
 * more supply for one group at a time, one and two more channels for several channels) → sentences
 * in the workshop's time zone. Advice only: computed in the browser as the form changes, never saved.
 */
import { tz } from '@date-fns/tz';
import { format } from 'date-fns';
import { equipmentWhatIf, resolveChemistry, type WhatIfAlternative, type WhatIfOutcome } from '$lib/engine';
import { planClock, planWhen } from '$lib/plan-form';
import { formatHours, formatSetAmps } from '$lib/run-words';
import {
	channelOf,
	planGroupsFor,
	setVoltsFor,
	windowsFor,
	type PlanCharger,
	type PlanPack,
	type SessionPlanInput
} from '$lib/session-plan';

/** One alternative in words: the sentence, and the hours with nobody there when they change. */
export type WhatIfLine = { text: string; unattendedText: string | null; saves: boolean };

export type SessionWhatIf = { applies: true; lines: WhatIfLine[] } | { applies: false; text: string } | null;

const HOUR = 3_600_000;
const countWords = ['no', 'one', 'two'];

/** Same calendar day in the workshop's zone: then the second time needs no date. */
function sameDay(a: Date, b: Date, timeZone: string): boolean {
	const day = (d: Date) => format(new Date(Math.round(d.getTime() / 60_000) * 60_000), 'yyyy-MM-dd', { in: tz(timeZone) });
	return day(a) === day(b);
}

/** `b` beside `a`: the clock alone on the same day, else the day too. */
const besides = (a: Date, b: Date, timeZone: string) => (sameDay(a, b, timeZone) ? planClock(b, timeZone) : planWhen(b, timeZone));

const unattendedOf = (o: WhatIfOutcome) => o.unattendedChargeHours + o.unattendedHoldHours;

function unattendedText(baseline: WhatIfOutcome, alt: WhatIfAlternative): string | null {
	const before = unattendedOf(baseline);
	const after = unattendedOf(alt);
	if (Math.abs(after - before) * 60 < 1) return null;
	const hours = (h: number) => (h * 60 < 1 ? 'none' : formatHours(h));
	return `Hours with nobody there (charging or held at the set voltage): ${hours(after)} instead of ${hours(before)}.`;
}

/**
 * The sentence for one alternative. `extra` names the equipment added ("a second 10 A supply", "one
 * more channel (3 in all)"); `withIt` the whole set for the bound ("two supplies", "3 channels").
 */
export function whatIfSentence(
	baseline: WhatIfOutcome,
	alt: WhatIfAlternative,
	extra: string,
	withIt: string,
	start: Date,
	timeZone: string
): WhatIfLine {
	const boundAt = new Date(start.getTime() + alt.lowerBoundHours * HOUR);
	const atBound = Math.abs(alt.end.getTime() - boundAt.getTime()) < 60_000;
	const bound = atBound
		? `no plan with ${withIt} can end sooner`
		: `it cannot end before ${besides(alt.end, boundAt, timeZone)} with ${withIt}`;
	const text = alt.noGain
		? `${capital(extra)} would not make this session end sooner than ${planWhen(baseline.end, timeZone)}: the steps share out no better, or the hands-on hours decide when they can start (${bound}).`
		: `With ${extra} this session would end ${planWhen(alt.end, timeZone)} instead of ${besides(alt.end, baseline.end, timeZone)} (${formatHours(alt.hoursSaved)} sooner; ${bound}).`;
	return { text, unattendedText: unattendedText(baseline, alt), saves: !alt.noGain };
}

const capital = (t: string) => t.charAt(0).toUpperCase() + t.slice(1);

/**
 * The what-if for a session's plan input, or null when there is no plan to compare with (the plan
 * screen shows the plan's own failure then).
 */
export function computeSessionWhatIf(
	pack: PlanPack,
	chargers: PlanCharger[],
	input: SessionPlanInput,
	timeZone: string
): SessionWhatIf {
	if (input.kind !== 'one-at-a-time' && input.kind !== 'channels') {
		const what = equipmentWhatIf({ kind: input.kind === 'bleed' || input.kind === 'rest-check' ? input.kind : 'bulk' });
		return what.ok && !what.applies ? { applies: false, text: `No equipment what-if here. ${what.why}` } : null;
	}
	const chem = resolveChemistry(pack.chemistry);
	if ('ok' in chem) return null;
	const charger = chargers.find((c) => c.id === input.chargerId);
	if (!charger) return null;
	const chosen = input.channelIds.length > 0 ? charger.channels.filter((c) => input.channelIds.includes(c.id)) : charger.channels;
	const groups = planGroupsFor(pack, input.startVolts);
	const setVolts = setVoltsFor(chem, input.kind, input.target, input.targetVolts);
	const win = windowsFor(input.handsOn, timeZone, input.plannedStart);
	if (chosen.length === 0 || !Array.isArray(groups) || setVolts === null || !win.ok) return null;
	const base = {
		chemistry: chem,
		groups,
		setVolts,
		start: input.plannedStart,
		swapMinutes: input.swapMinutes,
		...(win.windows ? { handsOn: win.windows } : {}),
		...(input.amps ? { amps: input.amps } : {})
	};
	const like = chosen[0];
	if (input.kind === 'one-at-a-time') {
		const what = equipmentWhatIf({ kind: 'one-at-a-time', input: { ...base, channel: channelOf(like) } });
		if (!what.ok || !what.applies) return null;
		const noun = charger.kind === 'bench-supply' ? 'supply' : charger.kind === 'multi-channel' ? 'channel' : 'charger';
		const lines = what.alternatives.map((alt) =>
			whatIfSentence(what.baseline, alt, `a second ${formatSetAmps(like.maxAmps)} ${noun}`, `two ${noun === 'supply' ? 'supplies' : `${noun}s`}`, input.plannedStart, timeZone)
		);
		return { applies: true, lines };
	}
	const what = equipmentWhatIf({ kind: 'channels', input: { ...base, channels: chosen.map(channelOf) } });
	if (!what.ok || !what.applies) return null;
	const lines = what.alternatives.map((alt) =>
		whatIfSentence(
			what.baseline,
			alt,
			`${countWords[alt.addedChannels] ?? alt.addedChannels} more ${alt.addedChannels === 1 ? 'channel' : 'channels'} like ${chosen.length === 1 ? 'this one' : 'these'} (${alt.channels} in all)`,
			`${alt.channels} channels`,
			input.plannedStart,
			timeZone
		)
	);
	return { applies: true, lines };
}

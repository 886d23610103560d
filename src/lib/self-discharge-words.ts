/**
 * The self-discharge page's words: what the engine's comparison says about each cell or group,
 * with the numbers, and what to do about it. Client-safe (plain data in, strings out).
 */
import type { Failure, ItemDischarge, SelfDischarge } from '$lib/engine';
import { SELF_DISCHARGE_DEFAULTS } from '$lib/engine';

export type SelfDischargeInput = {
	mode: 'cells' | 'groups';
	result: (SelfDischarge & { ok: true }) | Failure | null;
	tooSoon: { label: string; days: number }[];
	notMeasured: string[];
};

export type FlaggedLine = { label: string; sentence: string };
export type ResultRow = { label: string; days: string; dropMv: string; mvPerDay: string; verdict: 'fast' | 'gained' | 'with the batch' };

export type SelfDischargeWords = {
	failure: string | null;
	summary: string | null;
	fast: FlaggedLine[];
	gained: FlaggedLine[];
	rows: ResultRow[];
	fastAdvice: string;
	gainedAdvice: string;
	tooSoon: string | null;
	notMeasured: string | null;
	practice: string;
};

/** mV/day as people say it: one decimal under 10, whole numbers above. */
export function formatMvPerDay(value: number): string {
	const rounded = Math.abs(value) < 10 ? value.toFixed(1) : value.toFixed(0);
	return `${rounded.replace(/\.0$/, '')} mV/day`;
}

const days = (d: number) => `${d.toFixed(1).replace(/\.0$/, '')} day${d.toFixed(1) === '1.0' ? '' : 's'}`;

function listOf(labels: string[], max = 8): string {
	return labels.slice(0, max).join(', ') + (labels.length > max ? ` and ${labels.length - max} more` : '');
}

/** The page's words for a pack's checks (nothing compared yet: summary null, no failure). */
export function selfDischargeWords(input: SelfDischargeInput): SelfDischargeWords {
	const noun = input.mode === 'cells' ? 'cell' : 'group';
	const nouns = `${noun}s`;
	const d = SELF_DISCHARGE_DEFAULTS;
	const words: SelfDischargeWords = {
		failure: null,
		summary: null,
		fast: [],
		gained: [],
		rows: [],
		fastAdvice:
			input.mode === 'cells'
				? 'Set each of these cells aside: do not build it into a pack. Measure it again after a longer rest (a week or more) to be sure; a cell that still loses charge faster than the rest goes to a recycler. The cell maker’s datasheet says how much self-discharge it allows.'
				: 'One of the cells in each of these groups may have a soft internal short. Keep the pack out of service, let it rest and measure again over a longer time (a week or more); if the group still loses charge faster, open the pack and check the group’s cells one by one, and replace the one that falls. The cell maker’s datasheet says how much self-discharge it allows.',
		gainedAdvice: `A voltage that went up means the ${noun} was not at rest at the first measure, was charged in between, or was misread. Let it rest and measure it again; it is not judged until then.`,
		tooSoon: input.tooSoon.length
			? `${listOf(input.tooSoon.map((t) => `${t.label} (${days(t.days)})`))}: measured again less than ${d.minDays} days after the measure before. Wait at least ${d.minDays} days at rest before measuring again: a ${noun}'s voltage keeps settling for hours after a charge, and a healthy one loses only a few mV a day, so a shorter gap measures the settling, not the ${noun}.`
			: null,
		notMeasured: input.notMeasured.length
			? input.mode === 'cells'
				? `Not re-measured yet: ${listOf(input.notMeasured)}.`
				: `Only one measure so far: ${listOf(input.notMeasured)}. A group's first check is its starting point; measure again after at least ${d.minDays} days at rest.`
			: null,
		practice: `How ${nouns} are judged (common practice, not a published test): each ${noun}'s drop in mV per day between two measures at rest is compared with the batch's median. A ${noun} is flagged when its drop is above the median by more than three robust standard deviations (1.4826 × the median absolute deviation) and by at least ${d.floorMvPerDay} mV/day. It compares ${nouns} with each other, not with a limit: a batch that all loses charge fast is not flagged here. Defer to the cell maker's datasheet.`
	};
	const r = input.result;
	if (!r) return words;
	if (!r.ok) {
		words.failure = r.detail ?? 'The check could not be made.';
		return words;
	}
	const median = formatMvPerDay(r.medianMvPerDay);
	const sentence = (i: ItemDischarge) =>
		i.flag === 'gained'
			? `${i.label} rose ${Math.abs(i.dropMv).toFixed(0)} mV in ${days(i.days)}.`
			: `${i.label} lost ${formatMvPerDay(i.dropMvPerDay)} (${i.dropMv.toFixed(0)} mV in ${days(i.days)}); the batch's median is ${median}.`;
	words.summary = `Compared ${r.items.length} ${nouns}. The batch's median drop is ${median} (median absolute deviation ${formatMvPerDay(r.madMvPerDay)}); a ${noun} losing more than ${formatMvPerDay(r.thresholdMvPerDay)} is flagged. ${
		r.fast.length ? `${r.fast.length} ${r.fast.length === 1 ? noun + ' loses' : nouns + ' lose'} charge faster than the rest.` : `No ${noun} loses charge faster than the rest.`
	}`;
	words.fast = r.fast.map((i) => ({ label: i.label, sentence: sentence(i) }));
	words.gained = r.gained.map((i) => ({ label: i.label, sentence: sentence(i) }));
	words.rows = r.items.map((i) => ({
		label: i.label,
		days: i.days.toFixed(1),
		dropMv: i.dropMv.toFixed(0),
		mvPerDay: formatMvPerDay(i.dropMvPerDay),
		verdict: i.flag ?? 'with the batch'
	}));
	return words;
}

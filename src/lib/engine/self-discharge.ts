/**
 * Self-discharge check: cells (or a built pack's groups) measured at rest twice, some days apart.
 * Each item's drop in mV per day is compared with the batch: the batch's median and a robust
 * spread, the median absolute deviation (MAD), so that the few fast cells being looked for do not
 * widen the yardstick they are judged by.
 *
 * The rule is common practice with no published source: a cell whose drop per day stands clearly
 * above the rest of its batch loses charge faster (a soft internal short or a leak) and is set
 * aside. "Clearly above" is
 *
 *     drop per day > median + max(3 × 1.4826 × MAD, floor)
 *
 * 1.4826 × MAD estimates the standard deviation for normally spread data (the consistency constant
 * 1/Φ⁻¹(0.75), from memory); 3 of them is the usual robust outlier fence. The floor (5 mV/day by
 * default) keeps a batch whose drops are nearly all alike (MAD near 0) from flagging a cell 1 mV/day
 * above the rest, within a meter's last digit. An item whose voltage went up was not at rest, was
 * charged in between, or was misread: it is reported as such, never as healthy.
 *
 * Why a minimum gap (3 days by default): a cell's voltage keeps settling for hours after a charge
 * or discharge (rest 2 h after charge, 5 h after discharge before reading — TI SLVUDW8, see
 * references.md) and a healthy cell loses only a few mV a day, so a gap of hours measures the
 * settling and the meter, not the cell.
 */
import { fail, isFiniteNumber, timeOf, type Result } from './types';

const MS_PER_DAY = 86_400_000;

/** 1/Φ⁻¹(3/4): 1.4826 × MAD estimates σ of normally spread data (from memory). */
export const MAD_TO_SIGMA = 1.4826;

/** The defaults of SelfDischargeOptions (common practice, no published source). */
export const SELF_DISCHARGE_DEFAULTS = { minItems: 5, minDays: 3, floorMvPerDay: 5, sigmas: 3, gainToleranceMv: 2 } as const;

export interface VoltageCheckItem {
	id: string;
	/** As people say it: "T17", "group 7". */
	label: string;
	/** Volts at rest at the first measure (per cell; a group's cells are in parallel). */
	firstVolts: number;
	firstAt: Date;
	secondVolts: number;
	secondAt: Date;
}

export interface SelfDischargeOptions {
	/** Fewest items a batch comparison needs (default 5). */
	minItems?: number;
	/** Fewest days between an item's two measures (default 3). */
	minDays?: number;
	/** The least excess over the median that flags an item, in mV/day (default 5). */
	floorMvPerDay?: number;
	/** How many robust standard deviations above the median flag an item (default 3). */
	sigmas?: number;
	/** A rise above this many mV counts as a gain, not meter noise (default 2). */
	gainToleranceMv?: number;
}

export interface ItemDischarge {
	id: string;
	label: string;
	days: number;
	/** firstVolts − secondVolts in mV (negative: the voltage rose). */
	dropMv: number;
	dropMvPerDay: number;
	/** 'fast': loses charge faster than the batch; 'gained': the voltage rose; null: with the batch. */
	flag: 'fast' | 'gained' | null;
}

export interface SelfDischarge {
	/** In the order given. */
	items: ItemDischarge[];
	medianMvPerDay: number;
	madMvPerDay: number;
	/** Above this drop per day an item is flagged 'fast'. */
	thresholdMvPerDay: number;
	/** The 'fast' items, fastest first. */
	fast: ItemDischarge[];
	/** The items whose voltage rose, largest rise first. */
	gained: ItemDischarge[];
}

/** The median of a non-empty list (the mean of the two middle values for an even count). */
export function median(values: number[]): number {
	const sorted = [...values].sort((a, b) => a - b);
	const mid = sorted.length >> 1;
	return sorted.length % 2 ? sorted[mid] : (sorted[mid - 1] + sorted[mid]) / 2;
}

/** Drop per day of each item and the items that stand out from the batch; failures in plain words. */
export function checkSelfDischarge(items: VoltageCheckItem[], options: SelfDischargeOptions = {}): Result<SelfDischarge> {
	const d = SELF_DISCHARGE_DEFAULTS;
	const minItems = options.minItems ?? d.minItems;
	const minDays = options.minDays ?? d.minDays;
	const floor = options.floorMvPerDay ?? d.floorMvPerDay;
	const sigmas = options.sigmas ?? d.sigmas;
	const gainTolerance = options.gainToleranceMv ?? d.gainToleranceMv;

	if (items.length < minItems) {
		return fail(
			'too-few-items',
			`A comparison with the batch needs at least ${minItems} cells or groups measured twice; ${items.length} ${items.length === 1 ? 'is' : 'are'} measured twice so far.`
		);
	}
	const seen = new Set<string>();
	for (const item of items) {
		if (seen.has(item.id)) return fail('duplicate-item', `${item.label} is given twice.`);
		seen.add(item.id);
		for (const v of [item.firstVolts, item.secondVolts]) {
			if (!isFiniteNumber(v) || v < 0 || v > 5) {
				return fail('invalid-volts', `${item.label}: ${v} is not a cell voltage (0 to 5 V).`);
			}
		}
		const first = timeOf(item.firstAt);
		const second = timeOf(item.secondAt);
		if (!Number.isFinite(first) || !Number.isFinite(second)) {
			return fail('invalid-time', `${item.label}: a measure has no valid time.`);
		}
		if (second <= first) {
			return fail('times-out-of-order', `${item.label}: the second measure is not later than the first. Check the dates.`);
		}
	}
	const tooSoon = items.filter((i) => (timeOf(i.secondAt) - timeOf(i.firstAt)) / MS_PER_DAY < minDays);
	if (tooSoon.length) {
		const named = tooSoon.slice(0, 3).map((i) => i.label).join(', ') + (tooSoon.length > 3 ? ` and ${tooSoon.length - 3} more` : '');
		return fail(
			'too-soon',
			`${named}: measured again less than ${minDays} days after the first measure. Wait at least ${minDays} days at rest before measuring again: a cell's voltage keeps settling for hours after a charge, and a healthy cell loses only a few mV a day, so a shorter gap measures the settling, not the cell.`
		);
	}

	const measured = items.map((i) => {
		const days = (timeOf(i.secondAt) - timeOf(i.firstAt)) / MS_PER_DAY;
		const dropMv = (i.firstVolts - i.secondVolts) * 1000;
		return { id: i.id, label: i.label, days, dropMv, dropMvPerDay: dropMv / days };
	});
	const rates = measured.map((m) => m.dropMvPerDay);
	const medianMvPerDay = median(rates);
	const madMvPerDay = median(rates.map((r) => Math.abs(r - medianMvPerDay)));
	const thresholdMvPerDay = medianMvPerDay + Math.max(sigmas * MAD_TO_SIGMA * madMvPerDay, floor);

	const judged: ItemDischarge[] = measured.map((m) => ({
		...m,
		flag: -m.dropMv > gainTolerance ? 'gained' : m.dropMvPerDay > thresholdMvPerDay ? 'fast' : null
	}));
	return {
		ok: true,
		items: judged,
		medianMvPerDay,
		madMvPerDay,
		thresholdMvPerDay,
		fast: judged.filter((j) => j.flag === 'fast').sort((a, b) => b.dropMvPerDay - a.dropMvPerDay),
		gained: judged.filter((j) => j.flag === 'gained').sort((a, b) => a.dropMv - b.dropMv)
	};
}

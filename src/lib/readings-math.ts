/**
 * A reading in per-cell terms, and the values in it that fall outside the chemistry's range —
 * said in plain words before anything is sent (the run screen) and wherever readings are shown.
 * Client-safe: plain data in, plain data out.
 */
import type { Chemistry } from '$lib/engine';

export type ReadingValues = {
	/** null: the whole pack (volts are the pack's); a number: one group (volts per cell). */
	groupIndex: number | null;
	volts?: number | null;
	amps?: number | null;
	tempC?: number | null;
	ambientC?: number | null;
};

/**
 * Volts per cell: a whole-pack reading divided by the groups in series (the groups share the
 * pack's voltage, each group being parallel cells at one voltage); a group reading is already
 * per cell. null when the reading has no volts or `series` is not a positive whole number.
 */
export function perCellVolts(reading: Pick<ReadingValues, 'groupIndex' | 'volts'>, series: number): number | null {
	if (reading.volts === null || reading.volts === undefined || !Number.isFinite(reading.volts)) return null;
	if (reading.groupIndex !== null) return reading.volts;
	if (!Number.isInteger(series) || series < 1) return null;
	return reading.volts / series;
}

export type ReadingProblem = {
	field: 'volts' | 'tempC' | 'ambientC';
	/** Plain words: what was read, the bound it crosses, what to do. */
	message: string;
	/** Where the bound comes from. */
	source: string;
};

/**
 * Margin above the chemistry's max charge volts before a reading counts as over-charged: the
 * engine's critical over-voltage limit is maxChargeVolts + 0.05 V (src/lib/engine/limits.ts,
 * defaultLimits.overVoltsCritical).
 */
export const OVER_VOLTS_MARGIN = 0.05;

const v2 = (n: number) => `${n.toFixed(2)} V`;
const v3 = (n: number) => `${n.toFixed(3)} V`;
const c = (n: number) => `${Number(n.toFixed(1))} °C`;

/**
 * The values of a reading outside the chemistry's range, in plain words (empty when all is
 * within range). Bounds: volts per cell against the chemistry's maxChargeVolts (+0.05 V) and
 * minVolts (engine chemistry fields, BU-216 for the built-in ones); cell temperature against the
 * chemistry's charge window when `charging` (0–45 °C for the built-ins, BU-410 "Charging at High
 * and Low Temperatures") and its discharge window otherwise (−20–60 °C, BU-410); room temperature
 * against the charge window, as a pack left in that room cannot be charged safely outside it.
 */
export function readingProblems(
	reading: ReadingValues,
	chemistry: Pick<Chemistry, 'maxChargeVolts' | 'minVolts' | 'chargeTempC' | 'dischargeTempC'>,
	series: number,
	options: { charging?: boolean } = {}
): ReadingProblem[] {
	const charging = options.charging ?? true;
	const problems: ReadingProblem[] = [];
	const who = reading.groupIndex === null ? 'The pack' : `Group ${reading.groupIndex}`;
	const perCell = perCellVolts(reading, series);
	const ofPack = reading.groupIndex === null && perCell !== null ? ` (${v3(perCell)} per cell over ${series} groups in series)` : '';
	const voltsSource = 'the chemistry profile (maxChargeVolts, minVolts)';

	if (perCell !== null) {
		const ceiling = chemistry.maxChargeVolts + OVER_VOLTS_MARGIN;
		if (perCell > ceiling)
			problems.push({
				field: 'volts',
				source: voltsSource,
				message: `${who} reads ${v2(reading.volts!)}${ofPack}, above ${v2(ceiling)} per cell — past the chemistry's ${v2(chemistry.maxChargeVolts)} full-charge voltage. Check that you typed it right; if it is right, stop charging now and measure again with a second meter.`
			});
		else if (perCell < chemistry.minVolts)
			problems.push({
				field: 'volts',
				source: voltsSource,
				message: `${who} reads ${v2(reading.volts!)}${ofPack}, below the chemistry's ${v2(chemistry.minVolts)} minimum per cell. Check that you typed it right; if it is right, do not charge it at the planned current — ask the builder, and follow the cell maker's datasheet on recovering over-discharged cells.`
			});
	}

	const window = charging ? chemistry.chargeTempC : chemistry.dischargeTempC;
	const windowWords = charging ? 'charge window' : 'safe range';
	const tempSource = 'the chemistry profile (charge and discharge windows; BU-410 for the built-in ones)';
	if (reading.tempC !== null && reading.tempC !== undefined && Number.isFinite(reading.tempC)) {
		if (reading.tempC > window.max)
			problems.push({
				field: 'tempC',
				source: tempSource,
				message: `${who} is at ${c(reading.tempC)}, above the ${windowWords} of ${c(window.min)} to ${c(window.max)}. Check the sensor; if it is right, pause the charge and let it cool where a fire cannot spread.`
			});
		else if (reading.tempC < window.min)
			problems.push({
				field: 'tempC',
				source: tempSource,
				message: `${who} is at ${c(reading.tempC)}, below the ${windowWords} of ${c(window.min)} to ${c(window.max)}. Check the sensor; if it is right, ${charging ? 'do not charge until the pack has warmed up — charging this cold plates lithium' : 'let the pack warm up before using it'}.`
			});
	}
	if (reading.ambientC !== null && reading.ambientC !== undefined && Number.isFinite(reading.ambientC)) {
		const room = chemistry.chargeTempC;
		if (reading.ambientC > room.max || reading.ambientC < room.min)
			problems.push({
				field: 'ambientC',
				source: tempSource,
				message: `The room is at ${c(reading.ambientC)}, outside the ${c(room.min)} to ${c(room.max)} charge window. Check the thermometer; if it is right, move the pack somewhere ${reading.ambientC > room.max ? 'cooler' : 'warmer'} before charging on.`
			});
	}
	return problems;
}

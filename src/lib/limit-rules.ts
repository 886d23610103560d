/**
 * The rules for a planner's limits against the chemistry's defaults, shared by the plan form
 * (src/lib/plan-form.ts, in the browser) and the server's check (limitProblems in
 * src/lib/schemas/sessions.ts): which way each limit loosens, what a confirmation must name, and
 * which watch level must stay under its act-now level. Client-safe, no zod.
 */
import type { Limits } from '$lib/engine';

export type LimitKey = Exclude<keyof Limits, 'readingIntervalMinutes'>;

/**
 * Which way each limit loosens (alerts later or never): 'up' when a higher value is looser. The
 * words name it in messages.
 */
export const limitMeta: Record<LimitKey, { looser: 'up' | 'down'; words: string; unit: string }> = {
	overVoltsWarning: { looser: 'up', words: 'over-voltage watch limit', unit: 'V' },
	overVoltsCritical: { looser: 'up', words: 'over-voltage act-now limit', unit: 'V' },
	underVoltsWarning: { looser: 'down', words: 'under-voltage limit', unit: 'V' },
	tempWarningC: { looser: 'up', words: 'temperature watch limit', unit: '°C' },
	tempCriticalC: { looser: 'up', words: 'temperature act-now limit', unit: '°C' },
	minChargeTempC: { looser: 'down', words: 'lowest charging temperature', unit: '°C' },
	heatRiseCPerMinute: { looser: 'up', words: 'temperature rise limit', unit: '°C per minute' },
	heatAboveAmbientC: { looser: 'up', words: 'limit above room temperature', unit: '°C' },
	driftWarningVolts: { looser: 'up', words: 'group spread watch limit', unit: 'V' },
	driftCriticalVolts: { looser: 'up', words: 'group spread act-now limit', unit: 'V' },
	readingGraceMinutes: { looser: 'up', words: 'grace for a late reading', unit: 'minutes' },
	overrunFactor: { looser: 'up', words: 'overrun factor', unit: '×' }
};

/** True when `value` is looser than the default `usual` (past it, the datasheet must be named). */
export function isLooser(key: LimitKey, value: number, usual: number): boolean {
	return limitMeta[key].looser === 'up' ? value > usual + 1e-9 : value < usual - 1e-9;
}

/**
 * True when the text names the value: a number in it equal to its size (a decimal comma counts;
 * the sign is not read, so "−5 °C", "-5 °C" and "5 °C below zero" all name −5).
 */
export function namesValue(text: string, value: number): boolean {
	const numbers = text.match(/\d+(?:[.,]\d+)?/g) ?? [];
	return numbers.some((n) => Math.abs(Number(n.replace(',', '.')) - Math.abs(value)) < 1e-6);
}

/** Each watch level must not be above its act-now level (it would never be seen first). */
export const limitOrder: [LimitKey, LimitKey, string][] = [
	['overVoltsWarning', 'overVoltsCritical', 'The over-voltage watch limit must not be above its act-now limit.'],
	['tempWarningC', 'tempCriticalC', 'The temperature watch limit must not be above its act-now limit.'],
	['driftWarningVolts', 'driftCriticalVolts', 'The group spread watch limit must not be above its act-now limit.']
];

export const UNDER_BELOW_OVER = 'The under-voltage limit must be below the over-voltage watch limit.';

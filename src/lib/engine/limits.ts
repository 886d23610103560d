import { resolveChemistry, type Chemistry, type ChemistryId } from './chemistry';
import { checkSetVolts } from './charge';
import { isFiniteNumber, MS_PER_HOUR, MS_PER_MINUTE, timeOf, type Result } from './types';

export interface Limits {
	/** Set voltage + 20 mV per cell. */
	overVoltsWarning: number;
	/** Chemistry maximum + 50 mV per cell — BU-409's ±50 mV tolerance. */
	overVoltsCritical: number;
	/** The chemistry's full-discharge voltage per cell (BU-216). */
	underVoltsWarning: number;
	/** 45 °C: top of the charge window — BU-410, JEITA. */
	tempWarningC: number;
	/** 60 °C: no charge above — JEITA (TI "JEITA Battery Temperature Standard"). */
	tempCriticalC: number;
	/** 0 °C: no charging below — BU-410. */
	minChargeTempC: number;
	/** °C per minute during a charge (common practice). */
	heatRiseCPerMinute: number;
	/** °C above ambient during a charge (common practice). */
	heatAboveAmbientC: number;
	/** Spread of group voltages, volts (common practice). */
	driftWarningVolts: number;
	driftCriticalVolts: number;
	readingIntervalMinutes: number;
	readingGraceMinutes: number;
	/** A step is overrunning past this × its expected hours. */
	overrunFactor: number;
}

/** Default limits for a chemistry charged to setVolts (volts per cell); fails for a set voltage the chemistry refuses. */
export function defaultLimits(chemistry: ChemistryId | Chemistry, setVolts: number): Result<Limits> {
	const chem = resolveChemistry(chemistry);
	if ('ok' in chem) return chem;
	const f = checkSetVolts(chem, setVolts);
	if (f) return f;
	return {
		ok: true,
		overVoltsWarning: setVolts + 0.02,
		overVoltsCritical: chem.maxChargeVolts + 0.05,
		underVoltsWarning: chem.fullDischargeVolts,
		tempWarningC: chem.chargeTempC.max,
		tempCriticalC: 60,
		minChargeTempC: chem.chargeTempC.min,
		heatRiseCPerMinute: 1,
		heatAboveAmbientC: 10,
		driftWarningVolts: 0.03,
		driftCriticalVolts: 0.08,
		readingIntervalMinutes: 60,
		readingGraceMinutes: 15,
		overrunFactor: 1.5
	};
}

export type AlertKind =
	| 'over-voltage'
	| 'under-voltage'
	| 'over-temperature'
	| 'cold-charge'
	| 'heat-rise'
	| 'drift'
	| 'reading-overdue'
	| 'step-overrun'
	| 'step-finished';

export type AlertSeverity = 'info' | 'warning' | 'critical';

export interface AlertDraft {
	kind: AlertKind;
	severity: AlertSeverity;
	groupId?: string;
	/** The measured value, in the unit of its limit (V, °C, °C/min, minutes, hours, A). */
	value: number;
	threshold: number;
	message: string;
}

export interface GroupReading {
	groupId: string;
	at: Date;
	/** Volts per cell. */
	volts?: number;
	amps?: number;
	tempC?: number;
}

export interface EvaluateInput {
	limits: Limits;
	latest: GroupReading[];
	previous?: GroupReading[];
	ambientC?: number;
	charging: boolean;
	terminationAmps?: number;
	now: Date;
}

const v3 = (x: number) => `${x.toFixed(3)} V`;
const c1 = (x: number) => `${x.toFixed(1)} °C`;

/** Newest reading per group (readings with an invalid time are skipped). */
function newestByGroup(readings: GroupReading[] | undefined): Map<string, GroupReading> {
	const out = new Map<string, GroupReading>();
	if (!Array.isArray(readings)) return out;
	for (const r of readings) {
		if (!r || !Number.isFinite(timeOf(r.at))) continue;
		const seen = out.get(r.groupId);
		if (!seen || timeOf(r.at) > timeOf(seen.at)) out.set(r.groupId, r);
	}
	return out;
}

/**
 * Alert drafts from the latest reading of each group: over/under-voltage, over-temperature,
 * cold charge, heat rise (against `previous` or ambient), drift between groups and step finished
 * (current down to terminationAmps while charging). Values that are not numbers are skipped.
 */
export function evaluateReadings(input: EvaluateInput): AlertDraft[] {
	const alerts: AlertDraft[] = [];
	if (!input || typeof input !== 'object' || !input.limits) return alerts;
	const L = input.limits;
	const latest = newestByGroup(input.latest);
	const previous = newestByGroup(input.previous);
	for (const r of latest.values()) {
		const g = r.groupId;
		if (isFiniteNumber(r.volts)) {
			if (r.volts > L.overVoltsCritical) {
				alerts.push({
					kind: 'over-voltage', severity: 'critical', groupId: g, value: r.volts, threshold: L.overVoltsCritical,
					message: `Group ${g} reads ${v3(r.volts)} per cell, above the cells' limit of ${v3(L.overVoltsCritical)}. Switch the charger off now and disconnect the group; let it rest somewhere fire-safe and check it for heat or swelling.`
				});
			} else if (r.volts > L.overVoltsWarning) {
				alerts.push({
					kind: 'over-voltage', severity: 'warning', groupId: g, value: r.volts, threshold: L.overVoltsWarning,
					message: `Group ${g} reads ${v3(r.volts)} per cell, above the set voltage. Check the supply's set voltage and the leads, and stop the charge if it keeps rising.`
				});
			}
			if (r.volts < L.underVoltsWarning) {
				alerts.push({
					kind: 'under-voltage', severity: 'warning', groupId: g, value: r.volts, threshold: L.underVoltsWarning,
					message: `Group ${g} reads ${v3(r.volts)} per cell, below ${v3(L.underVoltsWarning)}. Bring it up gently at 0.1C and watch it; a cell that will not hold its voltage should come out.`
				});
			}
		}
		if (isFiniteNumber(r.tempC)) {
			if (r.tempC > L.tempCriticalC) {
				alerts.push({
					kind: 'over-temperature', severity: 'critical', groupId: g, value: r.tempC, threshold: L.tempCriticalC,
					message: `Group ${g} is at ${c1(r.tempC)}, above ${c1(L.tempCriticalC)}. Stop charging now, keep clear, and let it cool where a fire cannot spread.`
				});
			} else if (r.tempC > L.tempWarningC) {
				alerts.push({
					kind: 'over-temperature', severity: 'warning', groupId: g, value: r.tempC, threshold: L.tempWarningC,
					message: `Group ${g} is at ${c1(r.tempC)}, above ${c1(L.tempWarningC)}. Lower the current or pause until it cools, and find out why it is warm.`
				});
			}
			if (input.charging && r.tempC < L.minChargeTempC) {
				alerts.push({
					kind: 'cold-charge', severity: 'critical', groupId: g, value: r.tempC, threshold: L.minChargeTempC,
					message: `Group ${g} is at ${c1(r.tempC)} while charging, below ${c1(L.minChargeTempC)}: charging this cold plates lithium. Stop and let the pack warm up first.`
				});
			}
			if (input.charging) {
				const p = previous.get(g);
				const minutes = p ? (timeOf(r.at) - timeOf(p.at)) / MS_PER_MINUTE : 0;
				const rate = p && isFiniteNumber(p.tempC) && minutes > 0 ? (r.tempC - p.tempC) / minutes : undefined;
				if (rate !== undefined && rate > L.heatRiseCPerMinute) {
					alerts.push({
						kind: 'heat-rise', severity: 'warning', groupId: g, value: rate, threshold: L.heatRiseCPerMinute,
						message: `Group ${g} is warming ${rate.toFixed(1)} °C per minute. Stop the charge, check the connections and the cells for heat or swelling.`
					});
				} else if (isFiniteNumber(input.ambientC) && r.tempC - input.ambientC > L.heatAboveAmbientC) {
					alerts.push({
						kind: 'heat-rise', severity: 'warning', groupId: g, value: r.tempC - input.ambientC, threshold: L.heatAboveAmbientC,
						message: `Group ${g} is ${(r.tempC - input.ambientC).toFixed(1)} °C above the room. Lower the current or pause, and check for a loose connection or a weak cell.`
					});
				}
			}
		}
		if (input.charging && isFiniteNumber(r.amps) && isFiniteNumber(input.terminationAmps) && r.amps <= input.terminationAmps) {
			alerts.push({
				kind: 'step-finished', severity: 'info', groupId: g, value: r.amps, threshold: input.terminationAmps,
				message: `Group ${g}'s current is down to ${r.amps.toFixed(2)} A: its step is finished. Switch off or move the leads to the next group.`
			});
		}
	}
	const withVolts = [...latest.values()].filter((r) => isFiniteNumber(r.volts)) as (GroupReading & { volts: number })[];
	if (withVolts.length >= 2) {
		const vs = withVolts.map((r) => r.volts).sort((a, b) => a - b);
		const spread = vs[vs.length - 1] - vs[0];
		const mid = vs[vs.length >> 1];
		const outlier = withVolts.reduce((a, b) => (Math.abs(b.volts - mid) > Math.abs(a.volts - mid) ? b : a));
		const severity = spread > L.driftCriticalVolts ? 'critical' : spread > L.driftWarningVolts ? 'warning' : null;
		if (severity) {
			alerts.push({
				kind: 'drift', severity, groupId: outlier.groupId, value: spread,
				threshold: severity === 'critical' ? L.driftCriticalVolts : L.driftWarningVolts,
				message: `The groups are ${(spread * 1000).toFixed(0)} mV apart; group ${outlier.groupId} is furthest from the rest. ${
					severity === 'critical' ? 'Stop and find out why: a weak cell or a bad connection.' : 'Keep an eye on it and top-balance that group if it stays apart.'
				}`
			});
		}
	}
	return alerts;
}

export interface ClockInput {
	limits: Limits;
	/** Null or absent when nothing has been logged yet (then counted from the step's start). */
	lastReadingAt?: Date | null;
	stepStartedAt?: Date;
	stepExpectedHours?: number;
	now: Date;
}

/** Clock alerts: reading overdue (interval + grace), step overrun (elapsed > factor × expected hours). */
export function checkClock(input: ClockInput): AlertDraft[] {
	const alerts: AlertDraft[] = [];
	if (!input || typeof input !== 'object' || !input.limits) return alerts;
	const L = input.limits;
	const now = timeOf(input.now);
	if (!Number.isFinite(now)) return alerts;
	const last = timeOf(input.lastReadingAt ?? input.stepStartedAt);
	const overdueAfter = L.readingIntervalMinutes + L.readingGraceMinutes;
	if (Number.isFinite(last)) {
		const minutes = (now - last) / MS_PER_MINUTE;
		if (minutes > overdueAfter) {
			alerts.push({
				kind: 'reading-overdue', severity: 'warning', value: minutes, threshold: overdueAfter,
				message: `No reading for ${Math.round(minutes)} minutes. Someone should look at the pack now and log its voltages and temperature.`
			});
		}
	}
	const started = timeOf(input.stepStartedAt);
	if (Number.isFinite(started) && isFiniteNumber(input.stepExpectedHours) && input.stepExpectedHours > 0) {
		const hours = (now - started) / MS_PER_HOUR;
		const limit = L.overrunFactor * input.stepExpectedHours;
		if (hours > limit) {
			alerts.push({
				kind: 'step-overrun', severity: 'warning', value: hours, threshold: limit,
				message: `This step has run ${hours.toFixed(1)} h, well past the ${input.stepExpectedHours.toFixed(1)} h expected. Check the current and the group's voltage; a step that will not finish can mean a weak cell or a wrong set voltage.`
			});
		}
	}
	return alerts;
}

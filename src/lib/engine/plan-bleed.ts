import { checkStart } from './charge';
import { checkBase, NO_WINDOW_LEFT, type PlanInputBase, type PlanStep, type PlanWarning } from './plan-common';
import { curveSoc, curveVolts, integrateInverseVolts } from './soc';
import { fail, isPositive, MS_PER_HOUR, type Result } from './types';

export interface BleedInput extends Omit<PlanInputBase, 'setVolts'> {
	/** Ignored: a bleed has no set voltage (accepted so every plan input can share one shape). */
	setVolts?: number;
	/** Rest voltage per cell to bleed down to, or the lowest group's. */
	target: { volts: number } | 'lowest';
	/** A resistor across each group, or a constant-current load per group. */
	load: { ohms: number } | { amps: number };
}

export interface BleedStep extends PlanStep {
	/** Current at the start of the bleed (the highest, for a resistor). */
	amps: number;
	/** Mean current over the bleed. */
	averageAmps: number;
	hours: number;
	ahOut: number;
	/** Power in the load at the start (for sizing a resistor). */
	startWatts: number;
	fromVolts: number;
	toVolts: number;
}

export interface BleedPlan {
	steps: BleedStep[];
	end: Date;
	totalHours: number;
	warnings: PlanWarning[];
	targetVolts: number;
}

/**
 * Bleeds every group above the target (rest volts per cell, or the lowest group's) through its own
 * resistor or constant-current load, all at once: per group amps, hours and ahOut. A resistor's
 * current falls with the voltage: hours = capacity × R × ∫ dsoc / V(soc). Bleeds do not stop by
 * themselves: one that ends with nobody there warns.
 */
export function planBleed(input: BleedInput): Result<BleedPlan> {
	if (!input || typeof input !== 'object') return fail('invalid-input', 'A bleed input object is needed.');
	const base = checkBase(input, false);
	if ('ok' in base) return base;
	const { chem, groups, presence, startMs } = base;
	const load = input.load as { ohms?: number; amps?: number };
	if (!load || typeof load !== 'object') return fail('invalid-load', 'A load in ohms or amps is needed.');
	const ohms = load.ohms;
	const loadAmps = load.amps;
	if (ohms !== undefined ? !isPositive(ohms) : !isPositive(loadAmps)) {
		return fail('invalid-load', 'The load needs positive ohms or positive amps.');
	}
	const states = groups.map((g) => {
		const start = checkStart(chem, g.startSoc, g.startVolts);
		const soc = 'ok' in start ? 0 : start.startSoc;
		return { g, soc, volts: g.startVolts ?? curveVolts(chem.restCurve, soc) };
	});
	let targetSoc: number;
	let targetVolts: number;
	if (input.target === 'lowest') {
		const lowest = states.reduce((a, b) => (b.soc < a.soc ? b : a));
		targetSoc = lowest.soc;
		targetVolts = curveVolts(chem.restCurve, targetSoc);
	} else if (input.target && isPositive(input.target.volts)) {
		targetVolts = input.target.volts;
		targetSoc = Math.max(0, Math.min(1, curveSoc(chem.restCurve, targetVolts)));
	} else {
		return fail('invalid-target', "The target is a rest voltage per cell or 'lowest'.");
	}
	const warnings: PlanWarning[] = [];
	if (targetVolts < chem.fullDischargeVolts) {
		return fail('target-too-low', `Bleeding below ${chem.fullDischargeVolts} V per cell over-discharges the cells.`);
	}
	const connectMs = presence.earliestStart(startMs, 0);
	if (connectMs === null) return NO_WINDOW_LEFT;
	const steps: BleedStep[] = [];
	for (const s of states) {
		if (s.soc <= targetSoc + 1e-9) continue;
		const ahOut = (s.soc - targetSoc) * s.g.capacityAh;
		const fromVolts = curveVolts(chem.restCurve, s.soc);
		const hours =
			ohms !== undefined
				? s.g.capacityAh * ohms * integrateInverseVolts(chem.restCurve, targetSoc, s.soc)
				: ahOut / (loadAmps as number);
		const amps = ohms !== undefined ? fromVolts / ohms : (loadAmps as number);
		const endMs = connectMs + hours * MS_PER_HOUR;
		const hold = presence.holdHoursAfter(endMs);
		if (hold === null) return NO_WINDOW_LEFT;
		steps.push({
			groupId: s.g.id,
			channelId: 'bleed',
			start: new Date(connectMs),
			end: new Date(endMs),
			preHours: 0,
			ccHours: 0,
			cvHours: 0,
			ahIn: 0,
			unattendedHoldHours: hold,
			unattendedChargeHours: presence.unattendedHours(connectMs, endMs),
			amps,
			averageAmps: ahOut / hours,
			hours,
			ahOut,
			startWatts: amps * fromVolts,
			fromVolts,
			toVolts: targetVolts
		});
		if (hold > 1e-9) {
			warnings.push({
				code: 'bleed-unattended-end',
				groupId: s.g.id,
				message: `Group ${s.g.id}'s bleed reaches ${targetVolts.toFixed(3)} V after ${hours.toFixed(1)} h, but nobody is there for another ${hold.toFixed(1)} h: a load does not stop by itself and would keep draining the group. Use a timer or a load with a low-voltage cut-off, and bleed in a fire-safe place.`
			});
		}
		if (amps / s.g.capacityAh > 0.5) {
			warnings.push({ code: 'bleed-current-high', groupId: s.g.id, message: `Group ${s.g.id} would bleed at ${(amps / s.g.capacityAh).toFixed(2)}C; a smaller load keeps the cells and the resistor cool.` });
		}
	}
	if (chem.id === 'lfp' || chem.restCurveApproximate) {
		warnings.push({
			code: 'flat-curve',
			message: chem.restCurveApproximate
				? `The ${chem.name} rest curve is approximate: read the voltages again after the bleed and a rest.`
				: 'LFP rest voltage barely moves mid-range (about 1 mV per % of charge): bleed times there are rough; read again after a 2 h rest.'
		});
	}
	const endMs = Math.max(connectMs, ...steps.map((s) => s.end.getTime()));
	return {
		ok: true,
		steps,
		end: new Date(endMs),
		totalHours: (endMs - startMs) / MS_PER_HOUR,
		warnings,
		targetVolts
	};
}

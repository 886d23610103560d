import { chargeAmps, chargeModel, checkStart, runCharge, type Channel } from './charge';
import {
	checkBase,
	checkChannel,
	groupCharge,
	makeStep,
	NO_WINDOW_LEFT,
	stepWarnings,
	unattendedWarning,
	type GroupCharge,
	type Plan,
	type PlanInputBase,
	type PlanStep,
	type PlanWarning
} from './plan-common';
import { sequenceOneAtATime } from './plan-one';
import { curveVolts } from './soc';
import { fail, isPositive, MS_PER_HOUR, type Result } from './types';

/** The groupId of the whole-pack step in a bulk plan's steps. */
export const PACK_STEP_ID = 'pack';

export interface BulkInput extends PlanInputBase {
	packCharger: Channel & { id: string };
	bms?: { balanceAmps: number };
	topUpChannel?: Channel & { id: string };
}

export interface GroupAtStop {
	groupId: string;
	soc: number;
	/** Rest voltage per cell at that soc. */
	restVolts: number;
	/** Ah still to go to the set voltage's end state. */
	deficitAh: number;
}

export interface BulkPlan extends Plan {
	bulkHours: number;
	firstFullGroupId: string;
	groupsAtStop: GroupAtStop[];
	/** Without a BMS: the lagging groups one at a time on topUpChannel (absent without a top-up channel). */
	topUp?: { ok: true } & Plan;
	/** With a BMS: (largest − smallest deficit) / balance current. */
	balanceHours?: number;
	/** Pack charge current (same through every group). */
	amps: number;
}

/**
 * Whole pack in series from one pack charger, then top-up. Without a BMS the bulk charge stops when
 * the first group reaches its CC→CV point; each group's state then, and one-at-a-time top-up steps
 * on topUpChannel. With a BMS: balanceHours = spread of the deficits / balance current.
 */
export function planBulk(input: BulkInput): Result<BulkPlan> {
	const base = checkBase(input);
	if ('ok' in base) return base;
	const chargerFailure = checkChannel(input.packCharger, 'pack charger');
	if (chargerFailure) return chargerFailure;
	if (input.packCharger.id === undefined) return fail('invalid-channel', 'The pack charger needs an id.');
	if (input.bms !== undefined && !isPositive(input.bms?.balanceAmps)) {
		return fail('invalid-bms', 'The BMS balance current must be positive.');
	}
	if (input.topUpChannel !== undefined) {
		const f = checkChannel(input.topUpChannel, 'top-up channel');
		if (f) return f;
		if (input.topUpChannel.id === undefined) return fail('invalid-channel', 'The top-up channel needs an id.');
	}
	const { chem, groups, presence, startMs } = base;
	const current = chargeAmps({
		channel: input.packCharger,
		groupMaxChargeAmps: Math.min(...groups.map((g) => g.maxChargeAmps ?? chem.defaultChargeC * g.capacityAh)),
		setVolts: input.setVolts,
		seriesOnChannel: groups.length,
		requestedAmps: input.amps
	});
	if (!current.ok) return current;
	const amps = current.amps;
	const warnings: PlanWarning[] = [];

	// Each group's own model at the common current; the first to reach its CC→CV point stops the bulk charge.
	const states = groups.map((g) => {
		const model = chargeModel(chem, g.capacityAh, amps, input.setVolts, input.terminationAmps ?? chem.terminationC * g.capacityAh, g.resistanceOhms);
		const start = checkStart(chem, g.startSoc, g.startVolts);
		const startSoc = 'ok' in start ? 0 : start.startSoc;
		const restVolts = g.startVolts ?? curveVolts(chem.restCurve, startSoc);
		if (restVolts < chem.fullDischargeVolts) {
			warnings.push({
				code: 'deeply-discharged',
				groupId: g.id,
				message: `Group ${g.id} rests below ${chem.fullDischargeVolts} V per cell. Bring it up alone at 0.1C before charging the pack as a whole.`
			});
		}
		return { g, model, startSoc, hoursToCv: (Math.max(0, model.socAtCv - startSoc) * g.capacityAh) / amps };
	});
	let first = states[0];
	for (const s of states) if (s.hoursToCv < first.hoursToCv) first = s;
	const bulkHours = first.hoursToCv;
	const groupsAtStop: GroupAtStop[] = states.map((s) => {
		const soc = Math.min(s.model.endSoc, s.startSoc + (amps * bulkHours) / s.g.capacityAh);
		return {
			groupId: s.g.id,
			soc,
			restVolts: curveVolts(chem.restCurve, soc),
			deficitAh: Math.max(0, s.model.endSoc - soc) * s.g.capacityAh
		};
	});

	const bulkStartMs = presence.earliestStart(startMs, 0);
	if (bulkStartMs === null) return NO_WINDOW_LEFT;
	const deficits = groupsAtStop.map((s) => s.deficitAh);
	let balanceHours: number | undefined;
	let tailHours = 0;
	if (input.bms) {
		balanceHours = (Math.max(...deficits) - Math.min(...deficits)) / input.bms.balanceAmps;
		// The pack keeps charging in CV while the BMS bleeds: at least the CV tail of the first group.
		const tail = runCharge(first.model, first.model.socAtCv);
		tailHours = Math.max(balanceHours, tail.cvHours);
	}
	const packEstimate = {
		preHours: 0,
		ccHours: bulkHours,
		cvHours: tailHours,
		totalHours: bulkHours + tailHours,
		// With a BMS the string must still fill its emptiest group; the BMS bleeds the others meanwhile.
		ahIn: amps * bulkHours + (input.bms ? Math.max(...deficits) : 0),
		whIn: 0,
		socAtCv: 0,
		endSoc: 0,
		startSoc: 0,
		terminationAmps: 0
	};
	const made = makeStep(PACK_STEP_ID, input.packCharger.id, bulkStartMs, packEstimate, presence);
	if (!made) return NO_WINDOW_LEFT;
	const steps: PlanStep[] = [made.step];
	const bulkWarnings: PlanWarning[] = [];
	if (made.step.unattendedChargeHours > 1e-9 || made.step.unattendedHoldHours > 1e-9) {
		bulkWarnings.push(
			unattendedWarning(chem, input.setVolts, PACK_STEP_ID, made.step.unattendedChargeHours, made.step.unattendedHoldHours, 'The')
		);
	}
	if (!input.bms) {
		bulkWarnings.push({
			code: 'stop-bulk-charge',
			groupId: first.g.id,
			message: `Without a BMS the pack charge must stop after ${bulkHours.toFixed(1)} h, when group ${first.g.id} reaches ${input.setVolts.toFixed(2)} V per cell; a pack charger left on would push that group over. Use a timer and read the group voltages before then.`
		});
	}
	let topUp: ({ ok: true } & Plan) | undefined;
	let endMs = made.endMs;
	if (!input.bms) {
		if (!input.topUpChannel) {
			warnings.push({ code: 'no-top-up-channel', message: 'Add a top-up channel to plan the per-group top-up after the bulk charge.' });
		} else {
			const topUpBase = { ...base, startMs: made.endMs };
			const charges: GroupCharge[] = [];
			for (const s of states) {
				const at = groupsAtStop.find((x) => x.groupId === s.g.id) as GroupAtStop;
				if (at.deficitAh <= 1e-9 * s.g.capacityAh) continue;
				const charge = groupCharge(chem, s.g, input.topUpChannel, input.setVolts, input.amps, input.terminationAmps, at.soc);
				if ('ok' in charge) return charge;
				if (charge.estimate.totalHours > 1e-9) charges.push(charge);
			}
			const seq = sequenceOneAtATime(topUpBase, input.topUpChannel.id, charges, input.handsOn === undefined);
			if ('ok' in seq) return seq;
			const topUpEnd = Math.max(made.endMs, seq.endMs);
			topUp = {
				ok: true,
				steps: seq.steps,
				end: new Date(topUpEnd),
				totalHours: (topUpEnd - made.endMs) / MS_PER_HOUR,
				warnings: stepWarnings(chem, input.setVolts, seq.steps)
			};
			steps.push(...seq.steps);
			endMs = topUpEnd;
		}
	}
	return {
		ok: true,
		steps,
		end: new Date(endMs),
		totalHours: (endMs - startMs) / MS_PER_HOUR,
		warnings: [...bulkWarnings, ...(topUp?.warnings ?? []), ...warnings],
		bulkHours,
		firstFullGroupId: first.g.id,
		groupsAtStop,
		topUp,
		balanceHours,
		amps
	};
}

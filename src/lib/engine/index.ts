// The charge engine's public API: plain TypeScript over plain data (see docs/engine.md).
export type { Failure, Result } from './types';
export {
	chemistries,
	cvTaperFactors,
	familyOf,
	isChemistryId,
	resolveChemistry,
	type Chemistry,
	type ChemistryFamily,
	type ChemistryId
} from './chemistry';
export { restVoltageFromSoc, socFromRestVoltage, type SocReading } from './soc';
export {
	chargeAmps,
	endSocAtSetVolts,
	estimateCharge,
	type AmpsLimit,
	type Channel,
	type ChargeAmpsInput,
	type ChargeEstimate,
	type ChargeInput
} from './charge';
export { chargeEnvelope, fitCvTaperFactor, type EnvelopePoint } from './calibration';
export { reestimate, type ChargePhase, type Reestimate, type ReestimateInput, type StepReading } from './reestimate';
export { makespanLowerBound, scheduleLongestFirst, type LongestFirstSchedule } from './schedule';
export { partitionEqualCount, type PartitionOutcome } from './partition';
export type { HandsOnWindow, Plan, PlanGroup, PlanInputBase, PlanStep, PlanWarning } from './plan-common';
export { planOneAtATime, type OneAtATimeInput } from './plan-one';
export { planChannels, type ChannelsInput, type ChannelsPlan } from './plan-channels';
export { PACK_STEP_ID, planBulk, type BulkInput, type BulkPlan, type GroupAtStop } from './plan-bulk';
export { planBleed, type BleedInput, type BleedPlan, type BleedStep } from './plan-bleed';
export { equipmentWhatIf, type EquipmentWhatIf, type WhatIfAlternative, type WhatIfInput, type WhatIfOutcome } from './what-if';
export {
	checkClock,
	defaultLimits,
	evaluateReadings,
	type AlertDraft,
	type AlertKind,
	type AlertSeverity,
	type ClockInput,
	type EvaluateInput,
	type GroupReading,
	type Limits
} from './limits';
export {
	absoluteMinimumVolts,
	inspectBatch,
	inspectCells,
	matchCells,
	pickLeastRiskySuspects,
	SUSPECT_RISK_ORDER,
	type ArrivalCell,
	type CellFlag,
	type CellVerdict,
	type Inspection,
	type InspectionLimits,
	type InspectOptions,
	type SuspectChoice,
	type Match,
	type MatchedGroup,
	type MatchInputCell
} from './cells';
export { packRatings, type PackCell, type PackRatings } from './pack';
export {
	conditionKey,
	escalatesAt,
	escalationDue,
	reconcileAlerts,
	type ActiveAlert,
	type AlertScope,
	type EscalationState,
	type FoundCondition,
	type Reconciliation
} from './alert-rules';
export {
	compareSessions,
	type CompareSessionsInput,
	type GroupDrift,
	type SessionComparison,
	type SessionDriftDraft,
	type SessionSnapshot
} from './compare-sessions';
export { checkSelfDischarge, SELF_DISCHARGE_DEFAULTS, type ItemDischarge, type SelfDischarge, type SelfDischargeOptions, type VoltageCheckItem } from './self-discharge';
export { capacityFromRestStates, chargeResistance, chargesUntilFade, linearTrend, type CapacityInput, type CapacityFromRest, type CurrentStepReading, type FadePoint, type FadeProjection, type LinearTrend, type StepResistance, type StepResistanceOptions, type TrendPoint } from './health';

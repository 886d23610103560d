/**
 * The demo workshop's charge sessions (shared docs: demo-scenario.md): the cargo trike pack's
 * completed overnight top balance, its charge on the pack charger a month of riding later (where
 * group 7 ended 40 mV below the others: the drift alert the technician acknowledged), and the
 * camper house battery's session running now. Planned
 * through createSession (so the steps are the engine's plan); the run — step times, hourly
 * readings, the audit trail — is invented data, generated plausibly from that plan with a fixed
 * seed. Never a test's check value. Every charge in it has someone at the bench: the hands-on
 * hours, and a night watch where the charge runs through the night.
 */
import { TZDate } from '@date-fns/tz';
import { and, eq, inArray, sql } from 'drizzle-orm';
import { endSocAtSetVolts, restVoltageFromSoc, socFromRestVoltage, type Chemistry } from '$lib/engine';
import { sessionPlanSchema, plannedStartInstant } from '$lib/schemas/sessions';
import { computeSessionPlan, type SessionPlan } from '$lib/session-plan';
import { findMember, type Member } from '../auth/permissions';
import { db, type Tx } from '../db';
import { compareEndedSession } from '../alerts/session-drift';
import { alertDeliveries, alerts, auditEvents, chargeSessions, packs, users, type ChargeSession, type Reading, type SessionStep } from '../db/schema';
import { createSession, loadPlanContext, REST_HOURS_AFTER_CHARGE, type PlanContext } from '../sessions/core';
import { writeAudit } from '../sessions/audit';
import { seeded } from './packs';

const MINUTE = 60_000;
const HOUR = 60 * MINUTE;
const DAY = 24 * HOUR;

/** Days before now that the trike's top balance ran (a month of riding came after it). */
export const TRIKE_DAYS_AGO = 35;
/** Days before now that the trike was charged after that month of riding. */
export const TRIKE_RIDE_DAYS_AGO = 4;
/** How far group 7 ended below the other groups at the end of that charge, volts per cell. */
const GROUP_7_END_GAP = -0.04;
/** What the technician wrote when acknowledging the drift alert. */
export const DRIFT_ACK_NOTE =
	"Group 7's balance lead was loose at the BMS plug. Reseated it; I will log its rest voltage once it has rested two hours, and check it again at the next charge.";

/** The demo's builder (who plans and starts) and technician (on watch, runs the steps, logs). */
type DemoEmails = { builder: string; technician: string };
type People = { builder: Member; technician: Member };
type Rand = () => number;

/** 'YYYY-MM-DD' of an instant in the zone. */
function localDate(at: Date, timeZone: string): string {
	const d = new TZDate(at.getTime(), timeZone);
	return `${d.getFullYear()}-${String(d.getMonth() + 1).padStart(2, '0')}-${String(d.getDate()).padStart(2, '0')}`;
}

function wallTime(date: string, hhmm: string, timeZone: string): Date {
	const at = plannedStartInstant(`${date}T${hhmm}`, timeZone);
	if (!at) throw new Error(`demo: no wall time ${date} ${hhmm}`);
	return at;
}

async function planned(member: Member, input: Record<string, unknown>) {
	const saved = await createSession(member, sessionPlanSchema.parse(input));
	if (!saved.ok) throw new Error(`demo session not planned: ${saved.message}`);
	return saved;
}

/** The trike's top balance: four channels, from 18:30 into the night with a night watch, 35 days ago. */
async function planTrike(people: People, packId: string, chargerId: string, now: Date) {
	const tz = people.builder.workshop.timeZone;
	const day = localDate(new Date(now.getTime() - TRIKE_DAYS_AGO * DAY), tz);
	const nextDay = localDate(new Date(wallTime(day, '12:00', tz).getTime() + DAY), tz);
	return planned(people.builder, {
		packId,
		name: 'First top balance',
		kind: 'channels',
		target: 'full',
		chargerId,
		swapMinutes: 5,
		plannedStart: `${day}T18:30`,
		handsOn: {
			daily: [{ from: '08:00', to: '22:00' }],
			// The technician's night watch: awake at the bench until the day shift comes in.
			once: [{ start: wallTime(day, '22:00', tz).toISOString(), end: wallTime(nextDay, '08:00', tz).toISOString() }]
		},
		readingIntervalMinutes: 60,
		watchUserId: people.technician.user.id
	});
}

/**
 * The trike's charge after a month of riding: the whole pack on the 13S pack charger from 09:00,
 * then the BMS balancing, inside the day's hands-on hours.
 */
async function planTrikeRide(people: People, packId: string, chargerId: string, groups: { id: string; index: number }[], now: Date) {
	const tz = people.builder.workshop.timeZone;
	const day = localDate(new Date(now.getTime() - TRIKE_RIDE_DAYS_AGO * DAY), tz);
	return planned(people.builder, {
		packId,
		name: 'Charge after a month of riding',
		kind: 'bulk-bms',
		target: 'full',
		chargerId,
		swapMinutes: 5,
		plannedStart: `${day}T09:00`,
		handsOn: { daily: [{ from: '08:00', to: '22:00' }], once: [] },
		// Rest volts that morning: the groups within a couple of millivolts (a longer BMS balancing would run into the night).
		startVolts: Object.fromEntries(groups.map((g) => [g.id, 3.671 + ((g.index * 7) % 3) * 0.001])),
		readingIntervalMinutes: 60,
		watchUserId: people.technician.user.id
	});
}

/**
 * The camper battery's session, placed so that now falls inside a top-up step: bulk charge done,
 * a cell being topped up. Hands-on hours 07:00–23:00; when the demo starts at night, a one-off
 * night watch covers the session instead, so nothing in it ever charges with nobody there.
 */
async function planCamper(people: People, packId: string, chargerId: string, channelId: string, ctx: PlanContext, now: Date) {
	// Rest volts measured that morning: near the top of LFP's flat plateau.
	const startVolts = Object.fromEntries(ctx.pack.groups.map((g, i) => [g.id, [3.338, 3.343, 3.335, 3.341][i] ?? 3.34]));
	const daily = [{ from: '07:00', to: '23:00' }];
	const input = (start: Date, once: { start: string; end: string }[]) => ({
		kind: 'bulk-top-up' as const,
		target: 'full' as const,
		chargerId,
		channelIds: [channelId],
		topUpChannelId: channelId,
		swapMinutes: 5,
		plannedStart: start,
		handsOn: { daily, once },
		startVolts
	});
	const plan = (start: Date, once: { start: string; end: string }[]) => {
		const p = computeSessionPlan(ctx.pack, ctx.chargers, { ...input(start, once) }, ctx.timeZone);
		if (!p.ok) throw new Error(`demo camper plan: ${p.message}`);
		return p;
	};
	const target = (p: SessionPlan) => {
		const topUps = p.steps.filter((s) => s.role === 'top-up');
		return topUps[1] ?? topUps[0] ?? p.steps[p.steps.length - 1];
	};
	const inside = (p: SessionPlan) => {
		const t = target(p);
		return p.unattended.length === 0 && t.expectedStart.getTime() <= now.getTime() - 10 * MINUTE && t.expectedEnd.getTime() > now.getTime() + 10 * MINUTE;
	};
	// Laid out with someone there throughout, the step's offset from the start; now ≈ 45 % into it.
	const free = plan(now, [{ start: new Date(now.getTime() - DAY).toISOString(), end: new Date(now.getTime() + 3 * DAY).toISOString() }]);
	const t = target(free);
	const offset = t.expectedStart.getTime() - free.start.getTime() + 0.45 * (t.expectedEnd.getTime() - t.expectedStart.getTime());
	const start = new Date(Math.floor((now.getTime() - offset) / MINUTE) * MINUTE);
	let once: { start: string; end: string }[] = [];
	if (!inside(plan(start, once))) {
		once = [{ start: new Date(start.getTime() - 30 * MINUTE).toISOString(), end: new Date(start.getTime() + Math.ceil(free.totalHours + 2) * HOUR).toISOString() }];
		if (!inside(plan(start, once))) throw new Error('demo camper plan: no step runs now');
	}
	return planned(people.builder, {
		packId,
		name: 'Bulk charge and cell top-up',
		...input(start, once),
		plannedStart: start.toISOString(),
		readingIntervalMinutes: 60,
		watchUserId: people.technician.user.id
	});
}

/** A step as run: its actual times and status. */
type RunStep = SessionStep & { actualStart: Date | null; actualEnd: Date | null };

/**
 * Each step run a minute or two after its plan, never before the step before it on the same
 * channel has ended; `now` splits them into done, running and waiting.
 */
function runSteps(steps: SessionStep[], rand: Rand, now: Date): RunStep[] {
	const channelFree = new Map<string, number>();
	return steps.map((s) => {
		const channel = s.channelId ?? s.channelLabel;
		const startMs = Math.max(s.expectedStart.getTime() + Math.round(1 + rand() * 2) * MINUTE, (channelFree.get(channel) ?? 0) + MINUTE);
		const endMs = startMs + (s.expectedEnd.getTime() - s.expectedStart.getTime()) + Math.round(rand() * 2) * MINUTE;
		channelFree.set(channel, endMs);
		const [start, end] = [new Date(startMs), new Date(endMs)];
		if (end <= now) return { ...s, status: 'done', actualStart: start, actualEnd: end, restReadingDueAt: new Date(endMs + REST_HOURS_AFTER_CHARGE * HOUR) };
		if (start <= now) return { ...s, status: 'running', actualStart: start, actualEnd: null };
		return { ...s, status: 'waiting', actualStart: null, actualEnd: null };
	});
}

type ReadingRow = Pick<Reading, 'sessionId' | 'packId' | 'groupId' | 'stepId' | 'takenAt' | 'volts' | 'amps' | 'tempC' | 'ambientC' | 'note' | 'clientId'>;

type Segment = { step: RunStep; from: number; to: number; socFrom: number; socCc: number; socTo: number; amps: number };

/**
 * A group's volts, amps and heat at a moment, from the plan it ran: in CC the rest curve of its
 * state of charge plus the constant rise that meets the set voltage at the CC→CV point (as the
 * engine models a charge, so its re-estimate reads these readings back sensibly);
 * in CV the set voltage with the current tapering towards termination; at rest the curve again,
 * relaxing from where the charge left it.
 */
function groupAt(
	t: number,
	segments: Segment[],
	socStart: number,
	chem: Chemistry,
	setVolts: number,
	capacityAh: number,
	settleVolts: number
): { volts: number; amps: number | null; heat: number; step: RunStep | null } {
	const rest = (soc: number) => {
		const v = restVoltageFromSoc(chem, Math.min(1, Math.max(0, soc)));
		return typeof v === 'number' ? v : chem.nominalVolts;
	};
	const seg = segments.find((s) => s.from <= t && t < s.to);
	if (seg) {
		const { step } = seg;
		const total = step.preHours + step.ccHours + step.cvHours;
		const ccShare = total > 0 ? (step.preHours + step.ccHours) / total : 1;
		const tau = (t - seg.from) / (seg.to - seg.from);
		const warm = 1 - Math.exp(-(t - seg.from) / (30 * MINUTE));
		const heat = (6 * seg.amps * warm) / capacityAh;
		if (tau < ccShare) {
			const u = tau / ccShare;
			const soc = seg.socFrom + (seg.socCc - seg.socFrom) * u;
			// The engine's CC model (docs/engine.md): the curve plus a constant rise that meets the set
			// voltage where CV begins. At a trickle on a flat curve (5 A into 105 Ah of LFP) that rise
			// would hold the cells near the set voltage all along; a bench sees IR and polarisation
			// instead, so the rise is capped at 20 mV + 2 V per C (invented, plausible figures).
			const cRate = seg.amps / capacityAh;
			const socAtCv = endSocAtSetVolts(chem, setVolts) - chem.cvShareAt1C * cRate;
			const rise = Math.max(0.005, Math.min(setVolts - rest(socAtCv), 0.02 + 2 * cRate));
			return { volts: Math.min(setVolts, rest(soc) + rise), amps: seg.amps, heat, step };
		}
		const w = (tau - ccShare) / (1 - ccShare);
		const termination = chem.terminationC * capacityAh;
		return { volts: setVolts - 0.003, amps: seg.amps * Math.pow(termination / seg.amps, w), heat: heat * (1 - 0.6 * w), step };
	}
	const last = [...segments].reverse().find((s) => s.to <= t);
	if (!last) return { volts: rest(socStart), amps: null, heat: 0, step: null };
	// Off the charger the surface charge settles: towards the curve's volts, and a full group a
	// little below the set voltage (`settleVolts`, a few mV apart from group to group).
	const relax = Math.exp(-(t - last.to) / (20 * MINUTE));
	const atRest = Math.min(rest(last.socTo), setVolts - settleVolts);
	return { volts: atRest + (setVolts - 0.003 - atRest) * relax, amps: null, heat: 1.5 * relax, step: null };
}

/**
 * Hourly rounds of readings by the technician: every group's volts per cell and temperature, the
 * current of the groups on charge, and — while the whole pack charges — the pack's own reading.
 */
function readingsOf(opts: {
	session: ChargeSession;
	steps: RunStep[];
	groups: { id: string; index: number }[];
	chem: Chemistry;
	capacityAh: number;
	/** How far below the set voltage a full group settles at rest. */
	settleVolts: number;
	rounds: Date[];
	ambient: (at: Date) => number;
	rand: Rand;
	note?: (at: Date) => string;
	/** Volts per cell a group sits apart from the model (a group that drifted), by group index. */
	offset?: (groupIndex: number) => number;
	/** Also each group's reading two minutes before each of its steps ended (what the charger showed at its end). */
	stepEnds?: boolean;
	/**
	 * Also each group's reading just before its first charge step started (at rest, no current) and
	 * one just after with the current on: the pair the pack history's charge resistance is read
	 * from (ΔV/ΔI, within two minutes). `groupOhms`: the group's jump per amp, a little apart from
	 * group to group (invented, plausible: four cells of 16 mΩ in parallel, leads and the first
	 * seconds of polarisation).
	 */
	stepStarts?: { groupOhms: number };
}): ReadingRow[] {
	const { session, steps, groups, chem, capacityAh } = opts;
	const setVolts = session.setVolts ?? chem.maxChargeVolts;
	const socOf = (v: number) => {
		const r = socFromRestVoltage(chem, v);
		return r.ok ? r.soc : 0.5;
	};
	const tracks = new Map(
		groups.map((g) => {
			let soc = socOf(session.startVolts[g.id] ?? chem.nominalVolts);
			const socStart = soc;
			const segments: Segment[] = [];
			for (const step of steps.filter((s) => s.actualStart && (s.groupId === g.id || s.groupId === null))) {
				const from = step.actualStart!.getTime();
				const to = (step.actualEnd ?? new Date(step.actualStart!.getTime() + (step.expectedEnd.getTime() - step.expectedStart.getTime()))).getTime();
				const amps = step.amps ?? 1;
				const socTo = Math.min(1, soc + step.ah / capacityAh);
				const socCc = Math.min(socTo, soc + (amps * (step.preHours + step.ccHours)) / capacityAh);
				segments.push({ step, from, to, socFrom: soc, socCc, socTo, amps });
				soc = socTo;
			}
			return [g.id, { segments, socStart, settle: opts.settleVolts + opts.rand() * 0.004 }];
		})
	);
	const rows: ReadingRow[] = [];
	const base = { sessionId: session.id, packId: session.packId };
	/** One group's reading at `takenAt`: its row, and the step it was on. */
	const readGroup = (g: { id: string; index: number }, takenAt: Date, ambient: number, note: string, clientId: string) => {
		const track = tracks.get(g.id)!;
		const s = groupAt(takenAt.getTime(), track.segments, track.socStart, chem, setVolts, capacityAh, track.settle);
		// ±2 mV of meter noise, never above the set voltage the supply holds.
		const volts = Math.round(Math.min(setVolts, s.volts + (opts.offset?.(g.index) ?? 0) + (opts.rand() - 0.5) * 0.004) * 1000) / 1000;
		const ownAmps = s.step?.groupId === g.id && s.amps !== null;
		const row: ReadingRow = {
			...base,
			groupId: g.id,
			stepId: s.step?.groupId === g.id ? s.step.id : null,
			takenAt,
			volts,
			amps: ownAmps ? Math.round((s.amps! + (opts.rand() - 0.5) * 0.04) * 100) / 100 : null,
			tempC: Math.round((ambient + 0.5 + s.heat + opts.rand() * 0.6) * 2) / 2,
			ambientC: ambient,
			note,
			clientId
		};
		return { row, step: s.step, modelAmps: s.amps };
	};
	opts.rounds.forEach((at, k) => {
		const ambient = Math.round(opts.ambient(at) * 10) / 10;
		let packVolts = 0;
		let packStep: RunStep | null = null;
		let packAmps: number | null = null;
		for (const g of groups) {
			// Each group read a few seconds after the one before.
			const { row, step, modelAmps } = readGroup(g, new Date(at.getTime() + g.index * 20_000), ambient, g.index === 1 ? (opts.note?.(at) ?? '') : '', `demo-${k + 1}-g${g.index}`);
			packVolts += row.volts!;
			if (step?.groupId === null) [packStep, packAmps] = [step, modelAmps];
			rows.push(row);
		}
		if (packStep) {
			const step: RunStep = packStep;
			rows.push({
				...base,
				groupId: null,
				stepId: step.id,
				takenAt: new Date(at.getTime() + (groups.length + 1) * 20_000),
				volts: Math.round(packVolts * 100) / 100,
				// The charger's current as the model has it (tapering in CV), not the set current.
				amps: Math.round(((packAmps ?? step.amps ?? 0) + (opts.rand() - 0.5) * 0.04) * 100) / 100,
				tempC: null,
				ambientC: ambient,
				note: '',
				clientId: `demo-${k + 1}-pack`
			});
		}
	});
	if (opts.stepEnds) {
		for (const step of steps) {
			if (!step.actualEnd || step.role === 'rest') continue;
			const end = step.actualEnd.getTime();
			const ambient = Math.round(opts.ambient(step.actualEnd) * 10) / 10;
			for (const g of groups) {
				if (step.groupId !== null && step.groupId !== g.id) continue;
				// The last group read two minutes before the end, the others a few seconds before it.
				const takenAt = new Date(end - 2 * MINUTE - (groups.length - g.index) * 10_000);
				rows.push(readGroup(g, takenAt, ambient, '', `demo-end-${step.position}-g${g.index}`).row);
			}
			if (step.groupId === null && groups.length > 0) {
				// The charger's own figures at the end of a whole-pack step: pack volts and the current then.
				const takenAt = new Date(end - 2 * MINUTE - groups.length * 10_000);
				const parts = groups.map((g) => readGroup(g, takenAt, ambient, '', ''));
				rows.push({
					sessionId: session.id,
					packId: session.packId,
					groupId: null,
					stepId: step.id,
					takenAt,
					volts: Math.round(parts.reduce((sum, p) => sum + p.row.volts!, 0) * 100) / 100,
					amps: Math.round(((parts[0].modelAmps ?? step.amps ?? 0) + (opts.rand() - 0.5) * 0.04) * 100) / 100,
					tempC: null,
					ambientC: ambient,
					note: '',
					clientId: `demo-end-${step.position}-pack`
				});
			}
		}
	}
	if (opts.stepStarts) {
		const { groupOhms } = opts.stepStarts;
		const ohms = new Map(groups.map((g) => [g.id, groupOhms + opts.rand() * 0.0015]));
		const started = new Set<string>();
		const charging = steps.filter((s) => s.actualStart && ['charge', 'top-up', 'balance'].includes(s.role));
		for (const step of charging.sort((a, b) => a.actualStart!.getTime() - b.actualStart!.getTime())) {
			const start = step.actualStart!.getTime();
			const ambient = Math.round(opts.ambient(step.actualStart!) * 10) / 10;
			for (const g of groups) {
				if ((step.groupId !== null && step.groupId !== g.id) || started.has(g.id)) continue;
				started.add(g.id);
				// Read group by group a couple of seconds apart: 50 s before the current goes on, 20 s after.
				const before = readGroup(g, new Date(start - 50_000 + g.index * 2_000), ambient, '', `demo-start-${step.position}-g${g.index}-before`).row;
				const after = readGroup(g, new Date(start + 20_000 + g.index * 2_000), ambient, '', `demo-start-${step.position}-g${g.index}-after`).row;
				const amps = Math.round(((step.amps ?? 1) + (opts.rand() - 0.5) * 0.04) * 100) / 100;
				after.amps = amps;
				after.stepId = step.id;
				after.volts = Math.round((before.volts! + amps * ohms.get(g.id)!) * 1000) / 1000;
				rows.push(before, after);
			}
		}
	}
	return rows;
}

/** Round times every `interval` from `from` while not after `until`. */
function roundsBetween(from: Date, until: Date, interval = HOUR): Date[] {
	const out: Date[] = [];
	for (let t = from.getTime(); t <= until.getTime(); t += interval) out.push(new Date(t));
	return out;
}

/** Hourly rounds ending at `last` (the latest a little before now), none before `first`. */
function hourlyUntil(first: Date, last: Date): Date[] {
	const out: Date[] = [];
	for (let t = last.getTime(); t >= first.getTime(); t -= HOUR) out.unshift(new Date(t));
	return out;
}

type Audit = typeof auditEvents.$inferInsert;

function runAudits(session: ChargeSession, steps: RunStep[], starter: Member, runner: Member): Audit[] {
	const head = { workshopId: session.workshopId, packId: session.packId, sessionId: session.id };
	const who = (m: Member) => ({ actorId: m.user.id, actorLabel: m.user.name });
	const iso = (d: Date | null) => (d ? d.toISOString() : null);
	const out: Audit[] = [
		{ ...head, ...who(starter), kind: 'session.start', at: session.startedAt!, subjectType: 'session', subjectId: session.id, before: { status: 'planned' }, after: { status: 'running' } }
	];
	for (const s of steps) {
		const step = { ...head, ...who(runner), subjectType: 'step', subjectId: s.id };
		if (s.actualStart) out.push({ ...step, kind: 'step.start', at: s.actualStart, before: { status: 'waiting', actualStart: null, actualEnd: null }, after: { status: 'running', actualStart: iso(s.actualStart), actualEnd: null, position: s.position } });
		if (s.actualEnd) out.push({ ...step, kind: 'step.done', at: s.actualEnd, before: { status: 'running', actualStart: iso(s.actualStart), actualEnd: null }, after: { status: 'done', actualStart: iso(s.actualStart), actualEnd: iso(s.actualEnd), position: s.position } });
	}
	if (session.status === 'done') {
		const last = steps[steps.length - 1];
		out.push({ ...head, ...who(runner), kind: 'session.done', at: session.endedAt!, subjectType: 'session', subjectId: session.id, before: { status: 'running' }, after: { status: 'done', lastStepId: last?.id ?? null } });
	}
	return out;
}

async function membersOf(slug: string, emails: DemoEmails): Promise<People> {
	const rows = await db.select({ id: users.id, email: users.email, name: users.name }).from(users).where(inArray(users.email, Object.values(emails)));
	const member = async (email: string) => {
		const user = rows.find((r) => r.email === email);
		const m = user ? await findMember(user, slug) : null;
		if (!m) throw new Error(`demo: ${email} is not a member`);
		return m;
	};
	const [builder, technician] = await Promise.all([member(emails.builder), member(emails.technician)]);
	return { builder, technician };
}

/**
 * Plans and "runs" the demo sessions in the demo workshop (after the workshop, packs and chargers
 * are committed: createSession opens its own transaction); the run state, readings and audit
 * trail go in in one more transaction.
 */
export async function loadDemoSessions(slug: string, emails: DemoEmails, now = new Date()): Promise<void> {
	const people = await membersOf(slug, emails);
	const workshopId = people.builder.workshop.id;
	const packRows = await db.select().from(packs).where(eq(packs.workshopId, workshopId));
	const trikePack = packRows.find((p) => p.name === 'Cargo trike pack');
	const camperPack = packRows.find((p) => p.name === 'Camper house battery');
	if (!trikePack || !camperPack) throw new Error('demo: packs missing');
	const [trikeCtx, camperCtx] = await Promise.all([loadPlanContext(people.builder, trikePack.id), loadPlanContext(people.builder, camperPack.id)]);
	const hobby = trikeCtx.chargers.find((c) => c.kind === 'multi-channel');
	const bench = trikeCtx.chargers.find((c) => c.kind === 'bench-supply');
	const packCharger = trikeCtx.chargers.find((c) => c.kind === 'pack-charger');
	if (!hobby || !bench || bench.channels.length === 0 || !packCharger) throw new Error('demo: chargers missing');

	const trike = await planTrike(people, trikePack.id, hobby.id, now);
	const ride = await planTrikeRide(people, trikePack.id, packCharger.id, trikeCtx.pack.groups, now);
	const camper = await planCamper(people, camperPack.id, bench.id, bench.channels[0].id, camperCtx, now);

	const rand = seeded(20261203);
	// The trike: every step done; ended when its last step did.
	const trikeSteps = runSteps(trike.steps, rand, now);
	const trikeStarted = new Date(trike.session.plannedStart.getTime() + MINUTE);
	const trikeEnded = new Date(Math.max(...trikeSteps.map((s) => s.actualEnd!.getTime())));
	const trikeSession: ChargeSession = { ...trike.session, status: 'done', startedAt: trikeStarted, endedAt: trikeEnded };
	// The camper: started a few hours ago, a top-up running now.
	const camperSteps = runSteps(camper.steps, rand, now);
	const camperStarted = new Date(camper.session.plannedStart.getTime() + MINUTE);
	const camperSession: ChargeSession = { ...camper.session, status: 'running', startedAt: camperStarted };
	// The trike a month of riding later (its own seed: the other sessions' data stay as they were).
	const rideRand = seeded(20261204);
	const rideSteps = runSteps(ride.steps, rideRand, now);
	const rideStarted = new Date(ride.session.plannedStart.getTime() + MINUTE);
	const rideEnded = new Date(Math.max(...rideSteps.map((s) => s.actualEnd!.getTime())));
	const rideSession: ChargeSession = { ...ride.session, status: 'done', startedAt: rideStarted, endedAt: rideEnded };

	const trikeSpec = trikeCtx.pack;
	const trikeRounds = roundsBetween(new Date(trikeStarted.getTime() + 4 * MINUTE), trikeEnded);
	// A last round two hours after the last step: the rest readings the next checks fit from.
	trikeRounds.push(new Date(trikeEnded.getTime() + REST_HOURS_AFTER_CHARGE * HOUR + 5 * MINUTE));
	const trikeNight = wallTime(localDate(trikeStarted, trikeCtx.timeZone), '22:00', trikeCtx.timeZone);
	const rows = [
		...readingsOf({
			session: trikeSession,
			steps: trikeSteps,
			groups: trikeSpec.groups,
			chem: trikeSpec.chemistry,
			capacityAh: trikeSpec.cellCapacityAh * trikeSpec.parallel,
			settleVolts: 0.014,
			rounds: trikeRounds,
			// A workshop cooling through the night.
			ambient: (at) => 19.5 - Math.min(3, Math.max(0, (at.getTime() - trikeStarted.getTime()) / HOUR) * 0.3),
			rand,
			note: (at) => (at.getTime() === trikeRounds[trikeRounds.length - 1].getTime() ? 'Rest readings, two hours after the last step' : at >= trikeNight && at.getTime() - trikeNight.getTime() < HOUR ? 'Night watch: Priya at the bench' : ''),
			stepEnds: true,
			stepStarts: { groupOhms: 0.0055 }
		}),
		...readingsOf({
			session: camperSession,
			steps: camperSteps,
			groups: camperCtx.pack.groups,
			chem: camperCtx.pack.chemistry,
			capacityAh: camperCtx.pack.cellCapacityAh * camperCtx.pack.parallel,
			// LFP falls back from its charge voltage to the top of its plateau.
			settleVolts: 0.22,
			rounds: hourlyUntil(new Date(camperStarted.getTime() + 5 * MINUTE), new Date(now.getTime() - 12 * MINUTE)),
			ambient: () => 16.5,
			rand
		})
	];
	const rideRows = readingsOfRide(rideSession, rideSteps, trikeSpec, rideRand);
	const audits = [
		...runAudits(trikeSession, trikeSteps, people.builder, people.technician),
		...runAudits(rideSession, rideSteps, people.builder, people.technician),
		...runAudits(camperSession, camperSteps, people.builder, people.technician)
	];

	await db.transaction(async (tx) => {
		for (const [s, created] of [
			[trikeSession, new Date(trikeStarted.getTime() - DAY)],
			[rideSession, new Date(rideStarted.getTime() - 90 * MINUTE)],
			[camperSession, new Date(camperStarted.getTime() - 40 * MINUTE)]
		] as const) {
			await tx
				.update(chargeSessions)
				.set({ status: s.status, startedAt: s.startedAt, endedAt: s.endedAt, createdAt: created, updatedAt: s.endedAt ?? s.startedAt!, updatedBy: people.technician.user.id })
				.where(eq(chargeSessions.id, s.id));
			// The plan was made before the session ran: its record says so.
			await tx.update(auditEvents).set({ at: created }).where(and(eq(auditEvents.sessionId, s.id), eq(auditEvents.kind, 'session.create')));
		}
		const steps = [...trikeSteps, ...rideSteps, ...camperSteps];
		await tx.execute(sql`
			-- Times go as text: postgres.js under drizzle does not serialise a timestamptz[] parameter.
			update session_steps s set status = t.status::step_status, actual_start = t.actual_start::timestamptz,
				actual_end = t.actual_end::timestamptz, rest_reading_due_at = t.rest_due::timestamptz
			from unnest(
				${sql.param(steps.map((s) => s.id))}::text[],
				${sql.param(steps.map((s) => s.status))}::text[],
				${sql.param(steps.map((s) => s.actualStart?.toISOString() ?? null))}::text[],
				${sql.param(steps.map((s) => s.actualEnd?.toISOString() ?? null))}::text[],
				${sql.param(steps.map((s) => s.restReadingDueAt?.toISOString() ?? null))}::text[]
			) as t(id, status, actual_start, actual_end, rest_due)
			where s.id = t.id`);
		// The ride's charge is compared when it ended: its rest readings, taken later, are not in yet.
		const later = (r: ReadingRow) => r.sessionId === rideSession.id && r.takenAt > rideEnded;
		await insertReadings(tx, [...rows, ...rideRows.filter((r) => !later(r))], people.technician.user.id);
		if (audits.length) await tx.insert(auditEvents).values(audits);
		await raiseTrikeDrift(tx, rideSession, people.technician);
		await insertReadings(tx, rideRows.filter(later), people.technician.user.id);
	});
}

/**
 * The ride's readings: hourly rounds, each group at the end of the charge and of the balancing,
 * and a round two hours after. Group 7 sits about 35 mV under the others all along, and ended the
 * balancing exactly 40 mV below the mean of the others (its end reading is set so).
 */
function readingsOfRide(session: ChargeSession, steps: RunStep[], spec: PlanContext['pack'], rand: Rand): ReadingRow[] {
	const ended = session.endedAt!;
	const rounds = roundsBetween(new Date(session.startedAt!.getTime() + 4 * MINUTE), ended);
	const restRound = new Date(ended.getTime() + REST_HOURS_AFTER_CHARGE * HOUR + 5 * MINUTE);
	rounds.push(restRound);
	const rows = readingsOf({
		session,
		steps,
		groups: spec.groups,
		chem: spec.chemistry,
		capacityAh: spec.cellCapacityAh * spec.parallel,
		settleVolts: 0.014,
		rounds,
		ambient: () => 17.5,
		rand,
		offset: (index) => (index === 7 ? -0.035 : 0),
		stepEnds: true,
		stepStarts: { groupOhms: 0.0055 },
		note: (at) => (at.getTime() === restRound.getTime() ? 'Rest readings, two hours after the charge' : '')
	});
	const last = steps.reduce((a, b) => (b.actualEnd! > a.actualEnd! ? b : a));
	const ends = rows.filter((r) => r.clientId.startsWith(`demo-end-${last.position}-g`));
	const seven = spec.groups.find((g) => g.index === 7);
	const own = ends.find((r) => r.groupId === seven?.id);
	const others = ends.filter((r) => r !== own);
	if (!own || others.length === 0) throw new Error('demo: no end readings of the ride');
	const round = (v: number) => Math.round(v * 1000) / 1000;
	const meanOf = () => others.reduce((sum, r) => sum + r.volts!, 0) / others.length;
	let mean = meanOf();
	// A mean that ends in half a millivolt puts every gap to a whole-millivolt reading on x.5 mV,
	// which rounds either way with the order of the sum: one other group reads 1 mV lower then.
	if (Math.abs(((mean * 1000) % 1) - 0.5) < 0.05) {
		others[0].volts = round(others[0].volts! - 0.001);
		mean = meanOf();
	}
	// To the millivolt, as a meter shows it; the gap then words as 40 mV (39.5–40.5).
	own.volts = round(mean + GROUP_7_END_GAP);
	const words = (v: number) => Math.round(Math.abs(v - mean) * 1000);
	if (words(own.volts) !== Math.round(Math.abs(GROUP_7_END_GAP) * 1000)) own.volts = round(own.volts + 0.001);
	// The end readings are the step's last: an hourly round that happens to fall in its last minutes
	// (the demo's times follow the clock) would otherwise be the one compared.
	const endAt = Math.max(...ends.map((r) => r.takenAt.getTime()));
	const inLastMinutes = (r: ReadingRow) => r.takenAt.getTime() >= endAt && r.takenAt.getTime() <= last.actualEnd!.getTime();
	return rows.filter((r) => ends.includes(r) || !inLastMinutes(r));
}

/**
 * The drift alert of the ride's charge, raised as the app raises it when a session is done
 * (compareEndedSession, against the first top balance), its e-mails shown as sent then, and
 * acknowledged by the technician 38 minutes later with a note — the row and audit event that
 * acknowledging in the app writes.
 */
async function raiseTrikeDrift(tx: Tx, session: ChargeSession, technician: Member) {
	const ended = session.endedAt!;
	const changes = await compareEndedSession(tx, session.id, ended);
	const raised = changes.raised.filter((a) => a.kind === 'session-drift');
	if (raised.length !== 1) throw new Error(`demo: the trike's charge raised ${raised.length} drift alerts, not one`);
	const alertId = raised[0].id;
	const sentAt = new Date(ended.getTime() + 6_000);
	await tx
		.update(alertDeliveries)
		.set({ status: 'sent', attempts: 1, queuedAt: new Date(ended.getTime() + 1_000), sentAt, log: [{ at: sentAt.toISOString(), ok: true, detail: 'Accepted by the mail server.' }] })
		.where(and(eq(alertDeliveries.alertId, alertId), eq(alertDeliveries.status, 'pending')));
	const ackAt = new Date(ended.getTime() + 38 * MINUTE);
	await tx.update(alerts).set({ acknowledgedAt: ackAt, acknowledgedBy: technician.user.id, ackNote: DRIFT_ACK_NOTE }).where(eq(alerts.id, alertId));
	await writeAudit(tx, {
		workshopId: session.workshopId,
		actorId: technician.user.id,
		actorLabel: technician.user.name,
		kind: 'alert.acknowledge',
		packId: session.packId,
		sessionId: session.id,
		subjectType: 'alert',
		subjectId: alertId,
		at: ackAt,
		before: { acknowledgedAt: null, acknowledgedBy: null, ackNote: '' },
		after: { acknowledgedAt: ackAt.toISOString(), acknowledgedBy: technician.user.id, ackNote: DRIFT_ACK_NOTE }
	});
}

/** Demo readings in one statement, entered by hand by `enteredBy`. */
async function insertReadings(tx: Tx, rows: ReadingRow[], enteredBy: string) {
	if (rows.length === 0) return;
	await tx.execute(sql`
		insert into readings (session_id, pack_id, group_id, step_id, taken_at, volts, amps, temp_c, ambient_c, note, source, entered_by, client_id, received_at)
		select t.session_id, t.pack_id, t.group_id, t.step_id, t.taken_at::timestamptz, t.volts, t.amps, t.temp_c, t.ambient_c, t.note,
			'hand', ${enteredBy}, t.client_id, t.taken_at::timestamptz
		from unnest(
			${sql.param(rows.map((r) => r.sessionId))}::text[],
			${sql.param(rows.map((r) => r.packId))}::text[],
			${sql.param(rows.map((r) => r.groupId))}::text[],
			${sql.param(rows.map((r) => r.stepId))}::text[],
			${sql.param(rows.map((r) => r.takenAt.toISOString()))}::text[],
			${sql.param(rows.map((r) => r.volts))}::float8[],
			${sql.param(rows.map((r) => r.amps))}::float8[],
			${sql.param(rows.map((r) => r.tempC))}::float8[],
			${sql.param(rows.map((r) => r.ambientC))}::float8[],
			${sql.param(rows.map((r) => r.note))}::text[],
			${sql.param(rows.map((r) => r.clientId))}::text[]
		) as t(session_id, pack_id, group_id, step_id, taken_at, volts, amps, temp_c, ambient_c, note, client_id)`);
}

/**
 * The run screen's words and numbers as the bench reads them (look.md: units after a thin space,
 * volts to 3 decimals, currents to 2, temperatures whole; state as a word). Client-safe, no clock
 * inside: times are passed in.
 */

/** What the run page's load depends on: invalidated when the session's events say something changed. */
export const RUN_DEPENDENCY = 'cellsitter:session-run';

/** look.md's states: within limits, near a limit (or a reading due), a limit crossed, not charging / no data. */
export type RunState = 'steady' | 'watch' | 'act-now' | 'idle';

export const stateWords: Record<RunState, string> = {
	steady: 'steady',
	watch: 'watch',
	'act-now': 'act now',
	idle: 'idle'
};

/** A session's status as the run screen, the report and the pack's history write it. */
export const sessionStatusWords: Record<'draft' | 'planned' | 'running' | 'paused' | 'done' | 'stopped', string> = {
	draft: 'Draft',
	planned: 'Planned',
	running: 'Running',
	paused: 'Paused',
	done: 'Done',
	stopped: 'Stopped'
};

const THIN = '\u2009';
const MINUS = '\u2212';

/** Volts of a reading, to the millivolt: `4.182 V`. */
export function formatVolts(volts: number): string {
	return `${volts.toFixed(3)}${THIN}V`;
}

/** A set voltage as the supply's dial shows it: `4.20 V`, `54.60 V`. */
export function formatSetVolts(volts: number): string {
	return `${volts.toFixed(2)}${THIN}V`;
}

/** Amps without trailing zeros, at most 2 decimals: `10 A`, `2.5 A`, `0.35 A`. */
export function formatSetAmps(amps: number): string {
	return `${Number(amps.toFixed(2))}${THIN}A`;
}

/** Amps of a reading, to 2 decimals: `3.10 A`. */
export function formatAmps(amps: number): string {
	return `${amps.toFixed(2)}${THIN}A`;
}

/** Difference from the pack's mean with its sign: `+12 mV`, `−3 mV`, `0 mV`. */
export function formatMilliVolts(milliVolts: number): string {
	const mv = Math.round(milliVolts);
	if (mv === 0) return `0${THIN}mV`;
	return `${mv > 0 ? '+' : MINUS}${Math.abs(mv)}${THIN}mV`;
}

/** Whole degrees: `31 °C`. */
export function formatTemp(tempC: number): string {
	const t = Math.round(tempC);
	return `${t < 0 ? MINUS : ''}${Math.abs(t)}${THIN}°C`;
}

/** A duration in hours as people say it: `2 h 15 min`, `45 min`, `under a minute`. */
export function formatHours(hours: number): string {
	if (!Number.isFinite(hours) || hours < 0) return 'unknown';
	const minutes = Math.round(hours * 60);
	if (minutes < 1) return 'under a minute';
	const h = Math.floor(minutes / 60);
	const m = minutes % 60;
	if (h === 0) return `${m}${THIN}min`;
	if (m === 0) return `${h}${THIN}h`;
	return `${h}${THIN}h ${m}${THIN}min`;
}

/** A group's name on screen: group 5, or the whole pack. */
export function groupName(groupIndex: number | null): string {
	return groupIndex === null ? 'the whole pack' : `group ${groupIndex}`;
}

function capitalise(text: string): string {
	return text.charAt(0).toUpperCase() + text.slice(1);
}

export type InstructionStep = {
	groupIndex: number | null;
	role: string;
	/** The supply's set volts (per cell for a group, the pack's for the whole pack). */
	setVolts: number | null;
	amps: number | null;
	channelLabel: string;
};

/**
 * What to do to start a step: "Move the leads to group 5, set 4.20 V and 10 A". `move` says the
 * leads are already on another group (a previous step on the same channel); `showChannel` prefixes
 * the channel when the plan uses several.
 */
export function stepInstruction(step: InstructionStep, opts: { move: boolean; showChannel: boolean }): string {
	const target = groupName(step.groupIndex);
	const settings = [
		step.setVolts !== null ? `set ${formatSetVolts(step.setVolts)}` : null,
		step.amps !== null && step.amps > 0 ? formatSetAmps(step.amps) : null
	].filter(Boolean);
	const setPart = settings.length ? `, ${settings.join(' and ')}` : '';
	let text: string;
	switch (step.role) {
		case 'bleed':
			text = `connect the bleed load to ${target}${step.amps ? ` (about ${formatSetAmps(step.amps)})` : ''}`;
			break;
		case 'rest':
			text = `leave ${target} disconnected and let it rest`;
			break;
		case 'balance':
			text = `leave the pack on its charger while the BMS balances the groups`;
			break;
		default:
			text = `${step.groupIndex === null ? 'connect the charger to' : step.groupIndex !== null && opts.move ? 'move the leads to' : 'connect the leads to'} ${target}${setPart}`;
	}
	const channel = opts.showChannel && step.channelLabel ? `${step.channelLabel}: ` : '';
	return channel ? `${channel}${text}` : capitalise(text);
}

/** What is still in the page's queue, in words. */
export function waitingText(count: number, online: boolean): string {
	if (count <= 0) return '';
	const what = count === 1 ? '1 reading waiting to send' : `${count} readings waiting to send`;
	return online ? `${what} — sending now.` : `${what} — they will go when the connection is back.`;
}

/** When the next reading is due, relative to now: "due in 12 min", "due now", "overdue by 20 min". */
export function dueText(dueAt: Date, now: Date): string {
	const minutes = (dueAt.getTime() - now.getTime()) / 60_000;
	if (minutes >= 1) return `due in ${formatHours(minutes / 60)}`;
	if (minutes > -1) return 'due now';
	return `overdue by ${formatHours(-minutes / 60)}`;
}

/**
 * A time on the bench's clock in the workshop's zone: "11:20", or "Tue 02:30" when it falls on
 * another day than `now` there.
 */
export function formatClock(at: Date | string, now: Date, timeZone: string): string {
	const when = new Date(at);
	const day = (d: Date) => new Intl.DateTimeFormat('en-GB', { dateStyle: 'short', timeZone }).format(d);
	const time = new Intl.DateTimeFormat('en-GB', { hour: '2-digit', minute: '2-digit', hourCycle: 'h23', timeZone }).format(when);
	if (day(when) === day(now)) return time;
	return `${new Intl.DateTimeFormat('en-GB', { weekday: 'short', timeZone }).format(when)} ${time}`;
}

/**
 * "read at 04:45" for a tile whose reading is older than one reading interval, so an old number is
 * never taken for the group's voltage now; null while the reading is fresh.
 */
export function readAtText(takenAt: Date | string | null, now: Date, intervalMinutes: number, timeZone: string): string | null {
	if (takenAt === null) return null;
	const ageMinutes = (now.getTime() - new Date(takenAt).getTime()) / 60_000;
	return ageMinutes > intervalMinutes ? `read at ${formatClock(takenAt, now, timeZone)}` : null;
}

/** A number typed on a phone: a decimal comma is read as a point; blank is no value. */
export function parseTyped(text: string): number | undefined | null {
	const t = text.trim().replace(',', '.');
	if (t === '') return undefined;
	const n = Number(t);
	return Number.isFinite(n) && /^[-+]?(\d+\.?\d*|\.\d+)$/.test(t) ? n : null;
}

/** What a running step is doing: "Group 2 on the charger: 4.20 V, 3 A". */
export function stepNowText(step: InstructionStep): string {
	const who = capitalise(groupName(step.groupIndex));
	const settings = [step.setVolts !== null ? formatSetVolts(step.setVolts) : null, step.amps ? formatSetAmps(step.amps) : null]
		.filter(Boolean)
		.join(', ');
	switch (step.role) {
		case 'bleed':
			return `${who} on the bleed load`;
		case 'rest':
			return `${who} resting`;
		case 'balance':
			return 'The BMS balancing the groups';
		default:
			return `${who} on the charger${settings ? `: ${settings}` : ''}`;
	}
}

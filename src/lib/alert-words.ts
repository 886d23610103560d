/**
 * An alert's words: its title ("Group 7: over voltage"), what to do now, its state word and its
 * value with the unit. Client-safe: the inbox, the run screen, the e-mail and the push payload all
 * use the same words. look.md's voice: what happened, then what to do; no exclamation marks. Every
 * critical action starts by disconnecting the charger and ends with references.md §8's fire line.
 */
import type { AlertKind, AlertSeverity } from '$lib/engine';
import { formatAmps, formatHours, formatMilliVolts, formatVolts, stateWords } from '$lib/run-words';

/** The engine's kinds (limits.ts) and the drift between sessions (compare-sessions.ts). */
export type AlertWordKind = AlertKind | 'session-drift';

/** references.md §8 (UK fire and rescue services): in a fire, get out, stay out, call the fire service. */
export const FIRE_LINE = 'If there is smoke or flame, get out, keep out and call the fire service.';

const THIN = '\u2009';
const MINUS = '\u2212';

type Words = {
	title: string;
	/** What to do for an information alert or a warning; `g` is "group 7" or "the pack". */
	watch: (g: string) => string;
	/** What follows "Disconnect the charger from group 7 now." in a critical alert. */
	act: string;
};

const words: Record<AlertWordKind, Words> = {
	'over-voltage': {
		title: 'over voltage',
		watch: (g) => `Check the charger's set voltage and the leads on ${g}, and stop the charge if the voltage keeps rising.`,
		act: 'Keep clear of it, and do not charge it again until it has been checked for heat and swelling.'
	},
	'under-voltage': {
		title: 'under voltage',
		watch: (g) => `Do not put full current into ${g}: bring it up gently at 0.1C and watch it. A cell that will not hold its voltage should come out.`,
		act: 'A cell this low may be damaged, and a damaged cell must never be charged: keep it out of use until it has been checked.'
	},
	'over-temperature': {
		title: 'over temperature',
		watch: (g) => `Lower the current or pause the charge on ${g} until it cools, and find out why it is warm.`,
		act: 'Keep clear while it cools, and do not charge it again until it has been checked for swelling or damage.'
	},
	'cold-charge': {
		title: 'charging too cold',
		watch: (g) => `Pause the charge on ${g} until the pack has warmed into its charge range: charging cold cells plates lithium.`,
		act: 'Charging this cold plates lithium: let the pack warm up to room temperature before charging again.'
	},
	'heat-rise': {
		title: 'heating up fast',
		watch: (g) => `Pause the charge on ${g} and check its connections and cells for heat or swelling before going on.`,
		act: 'Keep clear while it cools; check the connections and cells for heat or swelling only once it is cool.'
	},
	drift: {
		title: 'apart from the other groups',
		watch: (g) => `Keep an eye on ${g}. If it stays apart from the others, top-balance it after this charge.`,
		act: 'Find out why it is so far from the others before charging again: a weak cell or a bad connection.'
	},
	'reading-overdue': {
		title: 'reading overdue',
		watch: (g) => `Someone should look at ${g} now and log its voltages and temperatures.`,
		act: 'Charge again only while someone stays with it and logs its readings.'
	},
	'step-overrun': {
		title: 'step running long',
		watch: (g) =>
			`Check the current and the voltage of ${g}. A step that will not finish can mean a weak cell or a wrong set voltage: stop it if the current will not fall.`,
		act: 'Look for a weak cell or a wrong set voltage before going on.'
	},
	'step-finished': {
		title: 'step finished',
		watch: (g) => `Switch off the charger on ${g}, or move the leads to the next group as the plan says.`,
		act: 'Find out why the step ended before going on.'
	},
	'session-drift': {
		title: 'drifting since the last charge',
		watch: (g) => `Check the connections and cells of ${g} at rest, and top-balance it if the gap keeps growing.`,
		act: 'Find out why it drifts before charging again: a weak cell or a bad connection.'
	}
};

/** Every kind with words of its own (the test holds it to the alerts table's kinds). */
export const ALERT_WORD_KINDS = Object.keys(words) as readonly AlertWordKind[];

function wordsOf(kind: string): Words | null {
	return Object.hasOwn(words, kind) ? words[kind as AlertWordKind] : null;
}

/** "group 7", or "the pack" for an alert about the whole session. */
function groupWords(groupLabel: string | null): string {
	return groupLabel ? `group ${groupLabel}` : 'the pack';
}

const capitalise = (text: string) => text.charAt(0).toUpperCase() + text.slice(1);

/** The alert's short line: "Group 7: over voltage", "Reading overdue". `groupLabel` is the group's name ("7"). */
export function alertTitle(kind: string, groupLabel: string | null): string {
	const title = wordsOf(kind)?.title ?? String(kind).replace(/-/g, ' ');
	return groupLabel ? `Group ${groupLabel}: ${title}` : capitalise(title);
}

/**
 * What to do now, in plain words. A critical alert: "Disconnect the charger from group 7 now.",
 * what follows for its kind, then the fire line. Never an invitation to leave a charge alone.
 */
export function alertAction(kind: string, severity: AlertSeverity, groupLabel: string | null): string {
	const g = groupWords(groupLabel);
	const w = wordsOf(kind);
	if (severity === 'critical') {
		return [`Disconnect the charger from ${g} now.`, w?.act ?? 'Find out what happened before charging again.', FIRE_LINE].join(' ');
	}
	return w ? w.watch(g) : `Look at ${g} now and check its readings against the limits.`;
}

/** look.md's state words: a warning → "watch", a critical alert → "act now"; information → "note". */
export function severityWord(severity: AlertSeverity): string {
	if (severity === 'critical') return stateWords['act-now'];
	if (severity === 'warning') return stateWords.watch;
	return 'note';
}

/**
 * The unit of an alert's value and threshold. A heat rise is a rate (°C/min) against the previous
 * reading, or degrees above the room (°C): the engine gives both the same kind, so pass the alert's
 * threshold and the session's limits to tell them apart (the rate when it cannot be told).
 */
export function alertUnit(
	kind: string,
	heatRise?: { threshold: number; limits: { heatRiseCPerMinute: number; heatAboveAmbientC: number } }
): string {
	switch (kind) {
		case 'over-voltage':
		case 'under-voltage':
		case 'drift':
		case 'session-drift':
			return 'V';
		case 'over-temperature':
		case 'cold-charge':
			return '°C';
		case 'heat-rise': {
			const l = heatRise?.limits;
			const aboveRoom = l && heatRise.threshold === l.heatAboveAmbientC && heatRise.threshold !== l.heatRiseCPerMinute;
			return aboveRoom ? '°C' : '°C/min';
		}
		case 'reading-overdue':
			return 'min';
		case 'step-overrun':
			return 'h';
		case 'step-finished':
			return 'A';
		default:
			return '';
	}
}

function formatDegrees(tempC: number): string {
	const text = Number.isInteger(tempC) ? String(Math.abs(tempC)) : Math.abs(tempC).toFixed(1);
	return `${tempC < 0 ? MINUS : ''}${text}${THIN}°C`;
}

/**
 * An alert's value (or threshold) as the bench reads it: `4.310 V`, `61 °C`, `60.5 °C`,
 * `1.3 °C/min`, `1 h 16 min`; a spread between groups in mV (`40 mV`), a change between sessions
 * with its sign (`−25 mV`). '—' for a value that is not a number.
 */
export function formatAlertValue(kind: string, value: number, unit: string = alertUnit(kind)): string {
	if (typeof value !== 'number' || !Number.isFinite(value)) return '—';
	switch (unit) {
		case 'V':
			if (kind === 'drift') return `${Math.round(Math.abs(value) * 1000)}${THIN}mV`;
			if (kind === 'session-drift') return formatMilliVolts(value * 1000);
			return formatVolts(value);
		case '°C':
			return formatDegrees(value);
		case '°C/min':
			return `${value.toFixed(1)}${THIN}°C/min`;
		case 'min':
			return formatHours(value / 60);
		case 'h':
			return formatHours(value);
		case 'A':
			return formatAmps(value);
		default:
			return String(value);
	}
}

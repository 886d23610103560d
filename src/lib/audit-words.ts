/**
 * The audit page's words: each kind of change, and one event as a sentence with its details
 * ("volts 4.21 → 4.12", a stop's reason, an acknowledgement's note). Client-safe, no database.
 */
import type { AuditKind } from './server/sessions/audit';
import { formatWhen } from './format';

/** Every kind the audit table holds, in the filter's order, with its words. */
export const auditKindWords = {
	'session.create': 'Session planned',
	'session.update': 'Plan changed',
	'session.start': 'Session started',
	'session.pause': 'Session paused',
	'session.resume': 'Session resumed',
	'session.stop': 'Session stopped',
	'session.done': 'Session done',
	'step.start': 'Step started',
	'step.done': 'Step ended',
	'step.skip': 'Step skipped',
	'watch.handover': 'Watch handed over',
	'watchers.change': 'Watchers changed',
	'reading.edit': 'Reading edited',
	'alert.acknowledge': 'Alert acknowledged',
	'device-token.issue': 'Logger key issued',
	'device-token.revoke': 'Logger key revoked',
	'logger-mapping.update': 'Logger columns changed'
} satisfies Record<AuditKind, string>;

export const auditKinds = Object.keys(auditKindWords) as AuditKind[];

/** What the page needs of an event. */
export type AuditEventView = {
	kind: string;
	before: Record<string, unknown> | null;
	after: Record<string, unknown> | null;
	/** The alert's title when the event is about an alert. */
	alertTitle?: string | null;
	/** The group of an edited reading (null: the whole pack). */
	groupIndex?: number | null;
};

const readingFields: Record<string, { word: string; unit: string }> = {
	volts: { word: 'volts', unit: '' },
	amps: { word: 'amps', unit: '' },
	tempC: { word: 'cell temperature', unit: ' °C' },
	ambientC: { word: 'room temperature', unit: ' °C' },
	note: { word: 'note', unit: '' },
	takenAt: { word: 'time', unit: '' }
};

const planFields: Record<string, string> = {
	name: 'name',
	plannedStart: 'planned start',
	plannedEnd: 'planned end',
	setVolts: 'set volts per cell',
	targetVolts: 'target volts per cell',
	amps: 'amps',
	status: 'status',
	readingIntervalMinutes: 'reading interval (minutes)',
	swapMinutes: 'swap minutes',
	restHours: 'rest hours',
	target: 'target',
	kind: 'kind'
};

const isIsoTime = (v: unknown): v is string => typeof v === 'string' && /^\d{4}-\d{2}-\d{2}T\d{2}:\d{2}/.test(v);

function shown(value: unknown, timeZone: string, unit = ''): string {
	if (value === null || value === undefined || value === '') return 'none';
	if (isIsoTime(value)) return formatWhen(value, timeZone);
	if (typeof value === 'number') return `${value}${unit}`;
	if (typeof value === 'string') return `“${value}”`;
	if (typeof value === 'boolean') return value ? 'yes' : 'no';
	return JSON.stringify(value);
}

const text = (v: unknown) => (typeof v === 'string' ? v : '');

/** "volts 4.21 → 4.12" for every field that differs between before and after. */
function changes(before: Record<string, unknown>, after: Record<string, unknown>, words: Record<string, string>, timeZone: string, units: Record<string, string> = {}): string[] {
	return Object.keys(after)
		.filter((k) => k in words && JSON.stringify(before[k]) !== JSON.stringify(after[k]))
		.map((k) => `${words[k]} ${shown(before[k], timeZone, units[k])} → ${shown(after[k], timeZone, units[k])}`);
}

/** One event as a sentence and its details, times in the workshop's zone. */
export function describeAuditEvent(e: AuditEventView, timeZone: string): { title: string; details: string[] } {
	const before = e.before ?? {};
	const after = e.after ?? {};
	const title = (auditKindWords as Record<string, string>)[e.kind] ?? e.kind;
	switch (e.kind) {
		case 'reading.edit': {
			const words = Object.fromEntries(Object.entries(readingFields).map(([k, f]) => [k, f.word]));
			const units = Object.fromEntries(Object.entries(readingFields).map(([k, f]) => [k, f.unit]));
			const which = e.groupIndex === undefined ? 'Reading edited' : e.groupIndex === null ? 'Whole-pack reading edited' : `Group ${e.groupIndex} reading edited`;
			return { title: which, details: changes(before, after, words, timeZone, units) };
		}
		case 'session.stop':
			return { title, details: [`Reason: ${text(after.reason) || 'none given'}`] };
		case 'session.done':
			return { title, details: text(after.reason) ? [`Why: ${text(after.reason)}`] : [] };
		case 'alert.acknowledge': {
			const note = text(after.ackNote) || text(after.note);
			return {
				title: e.alertTitle ? `${title}: ${e.alertTitle}` : title,
				details: [note ? `Note: “${note}”` : 'No note']
			};
		}
		case 'step.start':
		case 'step.done':
		case 'step.skip':
			return { title: typeof after.position === 'number' ? `${title}: step ${after.position}` : title, details: [] };
		case 'watch.handover':
			return { title, details: [`On watch: ${text(before.watchName) || 'nobody'} → ${text(after.watchName) || 'nobody'}`] };
		case 'watchers.change':
			return { title, details: [`${text(after.name) || 'Someone'} ${after.watching ? 'now watches' : 'no longer watches'} the session`] };
		case 'device-token.issue':
		case 'device-token.revoke':
			return { title, details: text(after.name) ? [`Key “${text(after.name)}”`] : [] };
		case 'session.update':
			return { title, details: changes(before, after, planFields, timeZone) };
		case 'session.pause':
		case 'session.resume':
		case 'session.start':
			return { title, details: text(after.reason) ? [`Reason: ${text(after.reason)}`] : [] };
		default:
			return { title, details: [] };
	}
}

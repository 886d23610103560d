/**
 * What an alert says in an e-mail and in a push notification: the finding, the reading and the
 * limit, what to do now, and the link to the alert's page (from the configured public origin,
 * never a request's Host).
 */
import { formatAlertValue, severityWord } from '$lib/alert-words';
import type { PushPayload } from '../push';
import type { Mail } from '../mail';
import { escapeHtml } from '../mail';

export type AlertForMessage = {
	id: string;
	kind: string;
	severity: 'info' | 'warning' | 'critical';
	title: string;
	message: string;
	action: string;
	value: number | null;
	threshold: number | null;
	unit: string;
	openedAt: Date;
	packName: string;
	sessionName: string;
	workshopSlug: string;
	workshopName: string;
	timeZone: string;
	/** Why this person gets it: 'escalation' says nobody has acknowledged it yet. */
	reason: 'watcher' | 'on-watch' | 'escalation';
	escalationMinutes: number;
};

export function alertLink(origin: string, a: Pick<AlertForMessage, 'workshopSlug' | 'id'>): string {
	return `${origin}/w/${a.workshopSlug}/alerts/${a.id}`;
}

function facts(a: AlertForMessage): string[] {
	const when = new Intl.DateTimeFormat('en-GB', { dateStyle: 'medium', timeStyle: 'short', timeZone: a.timeZone }).format(a.openedAt);
	const lines = [`Pack: ${a.packName}${a.sessionName ? ` — session “${a.sessionName}”` : ''}`, `When: ${when} (${a.timeZone})`];
	if (a.value !== null) lines.push(`Reading: ${formatAlertValue(a.kind, a.value, a.unit)}`);
	if (a.threshold !== null) lines.push(`Limit: ${formatAlertValue(a.kind, a.threshold, a.unit)}`);
	return lines;
}

function lead(a: AlertForMessage): string {
	return a.reason === 'escalation'
		? `Nobody has acknowledged this ${severityWord(a.severity)} alert in ${a.escalationMinutes} minutes, so it now goes to every owner of ${a.workshopName}.`
		: '';
}

export function alertMail(to: string, a: AlertForMessage, origin: string): Mail {
	const link = alertLink(origin, a);
	const word = severityWord(a.severity).toUpperCase();
	const escalated = lead(a);
	const subject = `[${word}] ${a.title} — ${a.packName}${a.reason === 'escalation' ? ' (not acknowledged)' : ''}`;
	const text = [
		escalated,
		a.message,
		'',
		...facts(a),
		'',
		`What to do now: ${a.action}`,
		'',
		`Open the alert and acknowledge it: ${link}`,
		'',
		"Cellsitter's alerts help the person on watch; they never replace them. Follow the cell maker's datasheet and local codes."
	]
		.filter((l, i) => l !== '' || i > 0)
		.join('\n');
	const html = `<!doctype html><html><body style="font-family:system-ui,sans-serif;line-height:1.45">
${escalated ? `<p><strong>${escapeHtml(escalated)}</strong></p>` : ''}
<p style="font-size:1.1em"><strong>${escapeHtml(word)}: ${escapeHtml(a.title)}</strong></p>
<p>${escapeHtml(a.message)}</p>
<ul>${facts(a)
		.map((l) => `<li>${escapeHtml(l)}</li>`)
		.join('')}</ul>
<p style="${a.severity === 'critical' ? 'border-left:4px solid #b3261e;padding-left:8px;' : ''}"><strong>What to do now:</strong> ${escapeHtml(a.action)}</p>
<p><a href="${escapeHtml(link)}">Open the alert and acknowledge it</a></p>
<p style="color:#6b655d;font-size:0.9em">Cellsitter's alerts help the person on watch; they never replace them. Follow the cell maker's datasheet and local codes.</p>
</body></html>`;
	return { to, subject, text, html };
}

export function alertPush(a: AlertForMessage, origin: string): PushPayload {
	const word = severityWord(a.severity);
	const reading = a.value !== null ? ` ${formatAlertValue(a.kind, a.value, a.unit)}.` : '';
	const body = `${a.packName}.${reading} ${a.severity === 'critical' ? a.action : a.message}`.slice(0, 400);
	return {
		title: `${word.charAt(0).toUpperCase()}${word.slice(1)}: ${a.title}`,
		body,
		url: alertLink(origin, a),
		tag: `alert-${a.id}`,
		severity: a.severity,
		alertId: a.id
	};
}

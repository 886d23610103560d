/**
 * What to do with the alerts an evaluation found, given the alerts already active: raise the new
 * ones, mark the ones found again as seen, clear the ones whose condition is gone or superseded.
 * And when an unacknowledged critical alert is due to escalate. Plain data in and out; the caller
 * stores the outcome (one active row per session + kind + group + severity).
 */
import type { AlertSeverity } from './limits';
import { isFiniteNumber, MS_PER_MINUTE, timeOf } from './types';

/** An alert already raised and not cleared (its condition held when last looked at). */
export type ActiveAlert = { id: string; kind: string; groupId: string | null; severity: AlertSeverity };

/** What an evaluation found: an `AlertDraft`, or a drift between sessions (`SessionDriftDraft`). */
export type FoundCondition = { kind: string; severity: AlertSeverity; groupId?: string | null };

/**
 * What an evaluation looked at: the kinds it can raise and, for a reading of some groups only,
 * those groups. Absence of a condition means "gone" only inside the scope.
 */
export type AlertScope = { kinds: readonly string[]; groupIds?: readonly string[] };

export type Reconciliation<D> = {
	/** New alerts to raise, loudest first, then by kind and group. */
	raise: D[];
	/** Active alert ids whose condition was found again (nothing new raised), sorted. */
	seen: string[];
	/** Active alert ids whose condition is gone, or which a louder alert of the same condition replaces, sorted. */
	clear: string[];
};

const RANK: Record<AlertSeverity, number> = { info: 0, warning: 1, critical: 2 };

function rankOf(severity: unknown): number {
	return typeof severity === 'string' && Object.hasOwn(RANK, severity) ? RANK[severity as AlertSeverity] : -1;
}

/**
 * The condition an alert is about: kind and group ('' when it is about the whole session, like the
 * database's group_key). Kinds never hold '/', so the key reads back unambiguously.
 */
export function conditionKey(a: { kind: string; groupId?: string | null }): string {
	return `${a.kind}/${a.groupId ?? ''}`;
}

function inScope(a: { kind: string; groupId?: string | null }, scope: AlertScope): boolean {
	if (!scope.kinds.includes(a.kind)) return false;
	if (!scope.groupIds) return true;
	return a.groupId == null || scope.groupIds.includes(a.groupId);
}

const byString = (a: string, b: string) => (a < b ? -1 : a > b ? 1 : 0);

/**
 * One active alert per condition and severity:
 * - a condition found again at a severity some active alert of it already has, or a quieter one,
 *   raises nothing: those active alerts are `seen` (an active critical stays when the condition
 *   is now only a warning);
 * - found louder than every active alert of it (a warning turned critical): the louder one is
 *   raised and the quieter active ones are cleared (superseded);
 * - an active alert inside the scope whose condition was not found is cleared; if the condition
 *   comes back later it is raised anew;
 * - active alerts outside the scope are left alone unless a draft of their own condition was found
 *   (the scope only limits what absence means);
 * - several drafts of one condition: the loudest is kept (the first of equals).
 * Drafts without a known severity or a kind are skipped. Nothing throws.
 */
export function reconcileAlerts<D extends FoundCondition>(
	active: readonly ActiveAlert[],
	found: readonly D[],
	scope: AlertScope
): Reconciliation<D> {
	const out: Reconciliation<D> = { raise: [], seen: [], clear: [] };
	const actives = Array.isArray(active) ? active.filter((a) => a && typeof a.id === 'string' && typeof a.kind === 'string') : [];
	const drafts = Array.isArray(found) ? found.filter((d) => d && typeof d.kind === 'string' && rankOf(d.severity) >= 0) : [];
	const safeScope: AlertScope = {
		kinds: Array.isArray(scope?.kinds) ? scope.kinds : [],
		groupIds: Array.isArray(scope?.groupIds) ? scope.groupIds : undefined
	};

	const loudest = new Map<string, D>();
	for (const d of drafts) {
		const key = conditionKey(d);
		const kept = loudest.get(key);
		if (!kept || rankOf(d.severity) > rankOf(kept.severity)) loudest.set(key, d);
	}

	const seen = new Set<string>();
	const clear = new Set<string>();
	for (const a of actives) {
		const d = loudest.get(conditionKey(a));
		if (!d) {
			if (inScope(a, safeScope)) clear.add(a.id);
		} else if (rankOf(a.severity) >= rankOf(d.severity)) {
			seen.add(a.id);
		} else {
			clear.add(a.id);
		}
	}
	for (const [key, d] of loudest) {
		const covered = actives.some((a) => conditionKey(a) === key && rankOf(a.severity) >= rankOf(d.severity));
		if (!covered) out.raise.push(d);
	}
	out.raise.sort(
		(p, q) => rankOf(q.severity) - rankOf(p.severity) || byString(p.kind, q.kind) || byString(p.groupId ?? '', q.groupId ?? '')
	);
	out.seen = [...seen].sort(byString);
	out.clear = [...clear].filter((id) => !seen.has(id)).sort(byString);
	return out;
}

/** What escalation needs of an alert. */
export type EscalationState = {
	severity: AlertSeverity;
	openedAt: Date;
	acknowledgedAt: Date | null;
	escalatedAt: Date | null;
};

/**
 * When a critical alert nobody has acknowledged goes to every owner: `escalationMinutes` after it
 * opened. Null when it never will: not critical, acknowledged, already escalated, or bad input
 * (an invalid date, minutes that are not a number ≥ 0). Clearing does not stop escalation (a
 * critical condition that came and went still needs someone to know); acknowledging does.
 */
export function escalatesAt(alert: EscalationState, escalationMinutes: number): Date | null {
	if (!alert || typeof alert !== 'object' || alert.severity !== 'critical') return null;
	if (alert.acknowledgedAt != null || alert.escalatedAt != null) return null;
	const opened = timeOf(alert.openedAt);
	if (!Number.isFinite(opened) || !isFiniteNumber(escalationMinutes) || escalationMinutes < 0) return null;
	return new Date(opened + escalationMinutes * MS_PER_MINUTE);
}

/** True once `now` has reached `escalatesAt` (exactly at the minute counts). False for bad input. */
export function escalationDue(alert: EscalationState, escalationMinutes: number, now: Date): boolean {
	const at = escalatesAt(alert, escalationMinutes);
	const t = timeOf(now);
	return at !== null && Number.isFinite(t) && t >= at.getTime();
}

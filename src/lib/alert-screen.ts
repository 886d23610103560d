/**
 * How an alert shows on screen (client-safe): its severity as look.md's state — a warning is
 * "watch", a critical alert "act now" (the words themselves: alert-words.ts) —, the words of its
 * deliveries, and the dependency the workshop layout's alert summary (the red strip, the Alerts
 * tab's count) hangs on, invalidated when a session's live events say an alert or a reading changed.
 */
import type { RunState } from './run-words';

export type AlertSeverity = 'info' | 'warning' | 'critical';

/** What the workshop layout's alert summary depends on (besides every navigation). */
export const ALERTS_DEPENDENCY = 'cellsitter:alerts';

/** look.md's state of an alert's severity; an information alert (a step finished) has none. */
export function severityState(severity: AlertSeverity): RunState | null {
	return severity === 'critical' ? 'act-now' : severity === 'warning' ? 'watch' : null;
}

/** A delivery's channel, why the person got it, and how it went, in words. */
export const deliveryChannelWords = { email: 'E-mail', push: 'Push' } as const;
export const deliveryReasonWords = { watcher: 'watches the session', 'on-watch': 'on watch', escalation: 'escalated (owner)' } as const;
export const deliveryStatusWords = {
	pending: 'waiting to send',
	sent: 'sent',
	failed: 'failed',
	held: 'held for quiet time',
	gone: 'no device to send to'
} as const;

import { describe, expect, it } from 'vitest';
import { conditionKey, escalatesAt, escalationDue, reconcileAlerts, type ActiveAlert, type EscalationState } from './alert-rules';
import type { AlertDraft } from './limits';

// The rules are the (issue 9, "Rules"): one open alert per condition and severity; every
// expected outcome below is written out by hand, never recomputed with the rules' own code.

const READING_KINDS = ['over-voltage', 'under-voltage', 'over-temperature', 'cold-charge', 'heat-rise', 'drift', 'step-finished'];
const CLOCK_KINDS = ['reading-overdue', 'step-overrun'];

function draft(kind: AlertDraft['kind'], severity: AlertDraft['severity'], groupId?: string): AlertDraft {
	return { kind, severity, groupId, value: 0, threshold: 0, message: `${kind} ${severity} ${groupId ?? ''}` };
}

const summary = (r: { raise: AlertDraft[]; seen: string[]; clear: string[] }) => ({
	raise: r.raise.map((d) => `${d.kind}/${d.severity}/${d.groupId ?? ''}`),
	seen: r.seen,
	clear: r.clear
});

/**
 * Plays a sequence of evaluations the way the server stores them: raised drafts become active
 * alerts with ids a1, a2, …; cleared ones leave the active list.
 */
function play(rounds: AlertDraft[][], scope = { kinds: READING_KINDS }) {
	let active: ActiveAlert[] = [];
	let next = 1;
	const log: ReturnType<typeof summary>[] = [];
	for (const found of rounds) {
		const r = reconcileAlerts(active, found, scope);
		log.push(summary(r));
		active = active.filter((a) => !r.clear.includes(a.id));
		for (const d of r.raise) active.push({ id: `a${next++}`, kind: d.kind, groupId: d.groupId ?? null, severity: d.severity });
	}
	return { log, active };
}

describe('conditionKey', () => {
	it('is kind and group, with an empty group for the whole session', () => {
		expect(conditionKey({ kind: 'over-voltage', groupId: 'g7' })).toBe('over-voltage/g7');
		expect(conditionKey({ kind: 'reading-overdue', groupId: null })).toBe('reading-overdue/');
		expect(conditionKey({ kind: 'reading-overdue' })).toBe('reading-overdue/');
		expect(conditionKey({ kind: 'drift', groupId: 'g1' })).not.toBe(conditionKey({ kind: 'drift', groupId: 'g2' }));
	});
});

describe('reconcileAlerts: one active alert per condition and severity', () => {
	it('a condition that persists raises nothing after the first time', () => {
		const ov = draft('over-voltage', 'warning', 'g7');
		const { log, active } = play([[ov], [ov], [ov]]);
		expect(log).toEqual([
			{ raise: ['over-voltage/warning/g7'], seen: [], clear: [] },
			{ raise: [], seen: ['a1'], clear: [] },
			{ raise: [], seen: ['a1'], clear: [] }
		]);
		expect(active.map((a) => a.id)).toEqual(['a1']);
	});

	it('a condition that clears and comes back is raised anew (a sequence of calls)', () => {
		const hot = draft('over-temperature', 'warning', 'g2');
		const { log } = play([[hot], [], [], [hot], [hot]]);
		expect(log).toEqual([
			{ raise: ['over-temperature/warning/g2'], seen: [], clear: [] },
			{ raise: [], seen: [], clear: ['a1'] },
			{ raise: [], seen: [], clear: [] },
			{ raise: ['over-temperature/warning/g2'], seen: [], clear: [] },
			{ raise: [], seen: ['a2'], clear: [] }
		]);
	});

	it('a warning that turns critical raises a new critical and clears the warning', () => {
		const { log, active } = play([[draft('over-voltage', 'warning', 'g7')], [draft('over-voltage', 'critical', 'g7')]]);
		expect(log[1]).toEqual({ raise: ['over-voltage/critical/g7'], seen: [], clear: ['a1'] });
		expect(active).toEqual([{ id: 'a2', kind: 'over-voltage', groupId: 'g7', severity: 'critical' }]);
	});

	it('an active critical whose condition is now only a warning stays, and no warning is raised', () => {
		const { log, active } = play([
			[draft('drift', 'critical', 'g3')],
			[draft('drift', 'warning', 'g3')],
			[draft('drift', 'warning', 'g3')],
			[]
		]);
		expect(log.slice(1)).toEqual([
			{ raise: [], seen: ['a1'], clear: [] },
			{ raise: [], seen: ['a1'], clear: [] },
			{ raise: [], seen: [], clear: ['a1'] }
		]);
		expect(active).toEqual([]);
	});

	it('an info turned warning supersedes the info; the same kind on another group is another condition', () => {
		const r = reconcileAlerts(
			[
				{ id: 'x1', kind: 'step-finished', groupId: 'g1', severity: 'info' },
				{ id: 'x2', kind: 'over-voltage', groupId: 'g1', severity: 'warning' }
			],
			[draft('step-finished', 'warning', 'g1'), draft('over-voltage', 'warning', 'g2'), draft('over-voltage', 'warning', 'g1')],
			{ kinds: READING_KINDS }
		);
		expect(summary(r)).toEqual({
			raise: ['over-voltage/warning/g2', 'step-finished/warning/g1'],
			seen: ['x2'],
			clear: ['x1']
		});
	});

	it('duplicated drafts of one condition keep the loudest only', () => {
		const r = reconcileAlerts(
			[],
			[draft('over-voltage', 'warning', 'g7'), draft('over-voltage', 'critical', 'g7'), draft('over-voltage', 'warning', 'g7')],
			{ kinds: READING_KINDS }
		);
		expect(summary(r).raise).toEqual(['over-voltage/critical/g7']);
	});

	it('orders what it returns the same way whatever the input order: loudest first, then kind, then group; ids sorted', () => {
		const found = [
			draft('under-voltage', 'warning', 'g2'),
			draft('over-voltage', 'critical', 'g9'),
			draft('over-temperature', 'warning', 'g1'),
			draft('over-voltage', 'warning', 'g1'),
			draft('step-finished', 'info', 'g4')
		];
		const active: ActiveAlert[] = [
			{ id: 'b', kind: 'heat-rise', groupId: 'g5', severity: 'warning' },
			{ id: 'a', kind: 'heat-rise', groupId: 'g6', severity: 'warning' }
		];
		const expected = {
			raise: [
				'over-voltage/critical/g9',
				'over-temperature/warning/g1',
				'over-voltage/warning/g1',
				'under-voltage/warning/g2',
				'step-finished/info/g4'
			],
			seen: [],
			clear: ['a', 'b']
		};
		expect(summary(reconcileAlerts(active, found, { kinds: READING_KINDS }))).toEqual(expected);
		expect(summary(reconcileAlerts([...active].reverse(), [...found].reverse(), { kinds: READING_KINDS }))).toEqual(expected);
	});

	describe('scope: absence clears only what the evaluation looked at', () => {
		const active: ActiveAlert[] = [
			{ id: 'g3-hot', kind: 'over-temperature', groupId: '3', severity: 'warning' },
			{ id: 'g5-hot', kind: 'over-temperature', groupId: '5', severity: 'critical' },
			{ id: 'late', kind: 'reading-overdue', groupId: null, severity: 'warning' },
			{ id: 'overrun', kind: 'step-overrun', groupId: null, severity: 'warning' },
			{ id: 'pack-v', kind: 'over-voltage', groupId: null, severity: 'warning' }
		];

		it('a reading of group 3 with nothing wrong clears group 3 only, never group 5, and leaves the clock kinds', () => {
			const r = reconcileAlerts(active, [], { kinds: READING_KINDS, groupIds: ['3'] });
			// 'pack-v' has no group: a reading kind about the whole pack is in every reading's scope.
			expect(summary(r)).toEqual({ raise: [], seen: [], clear: ['g3-hot', 'pack-v'] });
		});

		it('a reading of group 3 that is still hot: seen, and group 5 still untouched', () => {
			const r = reconcileAlerts(active, [draft('over-temperature', 'warning', '3')], { kinds: READING_KINDS, groupIds: ['3'] });
			expect(summary(r)).toEqual({ raise: [], seen: ['g3-hot'], clear: ['pack-v'] });
		});

		it('the clock clears its own kinds only', () => {
			const r = reconcileAlerts(active, [draft('step-overrun', 'warning')], { kinds: CLOCK_KINDS });
			expect(summary(r)).toEqual({ raise: [], seen: ['overrun'], clear: ['late'] });
		});

		it('a reading of every group (no groupIds) clears every reading kind not found', () => {
			const r = reconcileAlerts(active, [draft('over-temperature', 'critical', '5')], { kinds: READING_KINDS });
			expect(summary(r)).toEqual({ raise: [], seen: ['g5-hot'], clear: ['g3-hot', 'pack-v'] });
		});
	});

	it('bad input gives empty answers and never throws', () => {
		const empty = { raise: [], seen: [], clear: [] };
		expect(reconcileAlerts(null as never, null as never, null as never)).toEqual(empty);
		expect(
			reconcileAlerts([], [{ kind: 'over-voltage', severity: 'loud' } as never, null as never], { kinds: READING_KINDS })
		).toEqual(empty);
	});
});

describe('escalation timing (injected clock)', () => {
	// Opened 14:00:00 UTC with 10 escalation minutes: due at 14:10:00.000 exactly.
	const opened = new Date('2026-12-02T14:00:00.000Z');
	const critical: EscalationState = { severity: 'critical', openedAt: opened, acknowledgedAt: null, escalatedAt: null };
	const t = (hhmmss: string) => new Date(`2026-12-02T${hhmmss}Z`);

	it.each([
		['one millisecond before the 10 minutes', critical, '14:09:59.999', false],
		['exactly at the 10th minute', critical, '14:10:00.000', true],
		['after it', critical, '14:25:00.000', true],
		['acknowledged at 14:05', { ...critical, acknowledgedAt: t('14:05:00.000') }, '14:25:00.000', false],
		['acknowledged after the time but before the job looked', { ...critical, acknowledgedAt: t('14:11:00.000') }, '14:12:00.000', false],
		['already escalated', { ...critical, escalatedAt: t('14:10:00.000') }, '14:25:00.000', false],
		['a warning', { ...critical, severity: 'warning' as const }, '14:25:00.000', false],
		['an info', { ...critical, severity: 'info' as const }, '15:00:00.000', false]
	])('%s → due %s', (_, alert, now, due) => {
		expect(escalationDue(alert, 10, t(now))).toBe(due);
	});

	it('escalatesAt is the open time plus the minutes, or null when it never will', () => {
		expect(escalatesAt(critical, 10)?.toISOString()).toBe('2026-12-02T14:10:00.000Z');
		expect(escalatesAt(critical, 2.5)?.toISOString()).toBe('2026-12-02T14:02:30.000Z');
		expect(escalatesAt(critical, 0)?.toISOString()).toBe('2026-12-02T14:00:00.000Z');
		expect(escalatesAt({ ...critical, acknowledgedAt: t('14:01:00.000') }, 10)).toBeNull();
		expect(escalatesAt({ ...critical, escalatedAt: t('14:10:00.000') }, 10)).toBeNull();
		expect(escalatesAt({ ...critical, severity: 'warning' }, 10)).toBeNull();
	});

	it('bad input: false or null, never a throw', () => {
		expect(escalatesAt({ ...critical, openedAt: new Date('nonsense') }, 10)).toBeNull();
		expect(escalatesAt(critical, Number.NaN)).toBeNull();
		expect(escalatesAt(critical, -1)).toBeNull();
		expect(escalatesAt(null as never, 10)).toBeNull();
		expect(escalationDue(critical, 10, new Date('nonsense'))).toBe(false);
		expect(escalationDue(critical, Number.POSITIVE_INFINITY, t('23:00:00.000'))).toBe(false);
		expect(escalationDue({ ...critical, openedAt: '2026-12-02T14:00:00Z' as never }, 10, t('23:00:00.000'))).toBe(false);
	});
});

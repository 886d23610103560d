import { fail } from '@sveltejs/kit';
import { z } from 'zod';
import { recordId } from '$lib/schemas/packs';
import { lineText } from '$lib/schemas/text';
import { watcherPanel } from '$lib/server/alerts/recipients';
import { requireMemberWith } from '$lib/server/auth/permissions';
import { readForm } from '$lib/server/form-input';
import { guardActions } from '$lib/server/input-problems';
import {
	finishStep,
	getSession,
	handOverWatch,
	pauseSession,
	resumeSession,
	startSession,
	startStep,
	stopSession,
	type SessionChangeResult
} from '$lib/server/sessions/core';
import { buildRunView, loadRunAlerts, loadRunReadings } from '$lib/server/sessions/run-view';
import { RUN_DEPENDENCY } from '$lib/run-words';
import { sessionKindLabels } from '$lib/session-plan';
import type { Actions, PageServerLoad } from './$types';

export const load: PageServerLoad = async ({ locals, params, url, depends }) => {
	depends(RUN_DEPENDENCY);
	const member = await requireMemberWith(locals, params, url, 'sessions.view');
	const detail = await getSession(member, params.sessionId);
	const { session, pack } = detail;
	const runningIds = detail.steps.filter((s) => s.status === 'running').map((s) => s.id);
	const [readings, watchers, alerts] = await Promise.all([
		loadRunReadings(session.id, runningIds),
		watcherPanel(member, session.id),
		loadRunAlerts(session.id)
	]);
	const now = new Date();
	const view = buildRunView({ session, pack, groups: detail.groups, steps: detail.steps, readings, alerts, now });
	return {
		session: {
			id: session.id,
			name: session.name,
			kind: session.kind,
			kindLabel: sessionKindLabels[session.kind],
			status: session.status,
			stopReason: session.stopReason,
			plannedStart: session.plannedStart.toISOString(),
			startedAt: session.startedAt?.toISOString() ?? null,
			endedAt: session.endedAt?.toISOString() ?? null,
			readingIntervalMinutes: session.readingIntervalMinutes
		},
		pack: { id: pack.id, name: pack.name, series: pack.series, parallel: pack.parallel, chemistry: pack.chemistry, bmsFitted: pack.bmsFitted },
		groups: detail.groups,
		view,
		watch: detail.watch,
		watchers,
		chargerName: detail.chargerName,
		permissions: detail.permissions,
		me: member.user.id,
		timeZone: detail.timeZone,
		now: now.toISOString()
	};
};

const stepForm = z.object({ stepId: recordId('Choose a step of this session.') });
const stopForm = z.object({
	reason: lineText(500, {
		required: 'Say why the session stops (for example: “group 7 got warm”).',
		tooLong: 'Use at most 500 characters for the reason.'
	})
});

/** A refused change as the page shows it: the message beside the control that asked. */
function answer(result: SessionChangeResult, done: string, control: string) {
	if (!result.ok) return fail(result.status, { control, message: result.message });
	return { control, done };
}

export const actions: Actions = guardActions<Actions>({
	start: async ({ locals, params, url }) => {
		const member = await requireMemberWith(locals, params, url, 'plans.edit');
		return answer(await startSession(member, params.sessionId), 'The session is running.', 'session');
	},
	startStep: async ({ locals, params, url, request }) => {
		const member = await requireMemberWith(locals, params, url, 'sessions.run');
		const form = await readForm(request, stepForm);
		if (!form.ok) return fail(400, { control: 'step', message: form.message });
		return answer(await startStep(member, params.sessionId, form.data.stepId), 'Step started.', 'step');
	},
	finishStep: async ({ locals, params, url, request }) => {
		const member = await requireMemberWith(locals, params, url, 'sessions.run');
		const form = await readForm(request, stepForm);
		if (!form.ok) return fail(400, { control: 'step', message: form.message });
		return answer(await finishStep(member, params.sessionId, form.data.stepId), 'Step done.', 'step');
	},
	pause: async ({ locals, params, url }) => {
		const member = await requireMemberWith(locals, params, url, 'sessions.run');
		return answer(await pauseSession(member, params.sessionId), 'Paused. Switch the charger off if it is still on.', 'session');
	},
	resume: async ({ locals, params, url }) => {
		const member = await requireMemberWith(locals, params, url, 'sessions.run');
		return answer(await resumeSession(member, params.sessionId), 'Running again.', 'session');
	},
	stop: async ({ locals, params, url, request }) => {
		const member = await requireMemberWith(locals, params, url, 'sessions.run');
		const form = await readForm(request, stopForm);
		if (!form.ok) return fail(400, { control: 'stop', message: form.message });
		return answer(await stopSession(member, params.sessionId, form.data.reason), 'Stopped. Switch the charger off and disconnect it.', 'stop');
	},
	takeWatch: async ({ locals, params, url }) => {
		const member = await requireMemberWith(locals, params, url, 'sessions.run');
		return answer(await handOverWatch(member, params.sessionId, member.user.id), 'You are on watch.', 'watch');
	}
});

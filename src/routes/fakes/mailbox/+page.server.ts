import { error } from '@sveltejs/kit';
import { fakeMailbox, fakePushes, fakesEnabled, type FakeMessage, type FakePush } from '$lib/server/fakes';
import type { PageServerLoad } from './$types';

/** What the page shows of a push: the alert payload's fields when it has them. */
function shownPush(push: FakePush) {
	const json = push.json && typeof push.json === 'object' ? (push.json as Record<string, unknown>) : {};
	const text = (key: string) => (typeof json[key] === 'string' ? (json[key] as string) : '');
	return {
		id: push.id,
		title: text('title'),
		body: text('body') || (push.json === null ? push.payload : ''),
		url: text('url'),
		// Only the app's own paths and http(s) addresses become links (never javascript: and the like).
		linkable: /^(\/(?!\/)|https?:\/\/)/.test(text('url')),
		severity: text('severity'),
		urgency: push.urgency,
		receivedAt: push.receivedAt
	};
}

// The local fake SMTP server's messages and the fake push service's pushes, for demo and tests.
// Absent unless CELLSITTER_FAKES=1.
export const load: PageServerLoad = async ({ url }) => {
	if (!fakesEnabled()) error(404, 'Not found');
	const to = url.searchParams.get('to') ?? undefined;
	const [messages, pushes] = await Promise.allSettled([fakeMailbox(to), fakePushes()]);
	return {
		to: to ?? '',
		messages: messages.status === 'fulfilled' ? messages.value : ([] as FakeMessage[]),
		problem: messages.status === 'fulfilled' ? null : 'The local fake mail server is not running.',
		pushes: pushes.status === 'fulfilled' ? pushes.value.map(shownPush) : [],
		pushProblem: pushes.status === 'fulfilled' ? null : 'The local fake push service is not running.'
	};
};

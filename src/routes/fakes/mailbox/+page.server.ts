import { error } from '@sveltejs/kit';
import { fakeMailbox, fakesEnabled } from '$lib/server/fakes';
import type { PageServerLoad } from './$types';

// The local fake SMTP server's messages, for demo and tests. Absent unless CELLSITTER_FAKES=1.
export const load: PageServerLoad = async ({ url }) => {
	if (!fakesEnabled()) error(404, 'Not found');
	const to = url.searchParams.get('to') ?? undefined;
	try {
		return { messages: await fakeMailbox(to), to: to ?? '', problem: null };
	} catch {
		return { messages: [], to: to ?? '', problem: 'The local fake mail server is not running.' };
	}
};

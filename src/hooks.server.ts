import type { Handle, HandleServerError, ServerInit } from '@sveltejs/kit';
import { sequence } from '@sveltejs/kit/hooks';
import { dev } from '$app/environment';
import {
	clearSessionCookie,
	sessionCookieName,
	setSessionCookie,
	validateSession
} from '$lib/server/auth/session';
import { closeDb } from '$lib/server/db';
import { loadDemoIfEmpty } from '$lib/server/demo';
import { checkPublicOrigin, serverEnv } from '$lib/server/env';
import { startJobs, stopJobs } from '$lib/server/jobs/registry';
import { applyMigrations } from '$lib/server/migrate';
import { applySecurityHeaders } from '$lib/server/security-headers';

export const init: ServerInit = async () => {
	const env = serverEnv();
	// Before anything else: without a known origin, links in e-mails cannot be trusted.
	checkPublicOrigin({ dev });
	await applyMigrations();
	if (env.CELLSITTER_DEMO && env.CELLSITTER_DEMO_PASSWORD) {
		if (await loadDemoIfEmpty(env.CELLSITTER_DEMO_PASSWORD)) console.log('Loaded the demo workshop.');
	}
	// Jobs run here unless a separate `npm run worker` does them (CELLSITTER_JOBS=off).
	await startJobs(env.CELLSITTER_JOBS === 'off' ? 'send-only' : 'work');
	process.once('sveltekit:shutdown', () => {
		// Running jobs finish first; then both pools close and the process can exit.
		void stopJobs()
			.catch((e) => console.error('stopping jobs:', e))
			.finally(() => closeDb());
	});
};

const handleAuth: Handle = async ({ event, resolve }) => {
	const sessionId = event.cookies.get(sessionCookieName);
	event.locals.user = null;
	event.locals.session = null;
	if (sessionId) {
		const { session, user } = await validateSession(sessionId);
		if (session?.fresh) setSessionCookie(event.cookies, session, event.url);
		if (!session) clearSessionCookie(event.cookies, event.url);
		event.locals.user = user;
		event.locals.session = session;
	}
	return resolve(event);
};

const handleSecurityHeaders: Handle = async ({ event, resolve }) => {
	const response = await resolve(event);
	applySecurityHeaders(response.headers, event.url);
	return response;
};

export const handle = sequence(handleAuth, handleSecurityHeaders);

export const handleError: HandleServerError = ({ error, event, status, message }) => {
	if (status === 404) return { message: 'Not found' };
	const id = crypto.randomUUID().slice(0, 8);
	console.error(`[${id}] ${event.request.method} ${event.url.pathname}`, error);
	return { message: status >= 500 ? 'Something went wrong on our side.' : message, id };
};

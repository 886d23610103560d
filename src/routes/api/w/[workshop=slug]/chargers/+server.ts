/**
 * The workshop's chargers as JSON. GET lists them with their channels; POST records one, its body
 * checked by the charger form's own schema. Errors come back as { errors: [{ path, message }] }.
 */
import { json } from '@sveltejs/kit';
import type { z } from 'zod';
import type { Action } from '$lib/permissions';
import { requireMemberWith } from '$lib/server/auth/permissions';
import { createCharger, listChargers } from '$lib/server/chargers';
import { chargerSchema } from '$lib/schemas/chargers';
import type { RequestEvent, RequestHandler } from './$types';

type ApiError = { path: string; message: string };

const errors = (status: number, list: ApiError[]) => json({ errors: list }, { status });

function issuesToErrors(issues: z.core.$ZodIssue[]): ApiError[] {
	return issues.map((i) => ({ path: i.path.map(String).join('.'), message: i.message }));
}

/** The member behind the request, or a JSON 401 rather than the pages' redirect to sign-in. */
async function memberWith(event: RequestEvent, action: Action) {
	if (!event.locals.user) return null;
	return requireMemberWith(event.locals, event.params, event.url, action);
}

const signInFirst = () => json({ message: 'Sign in first.' }, { status: 401 });

export const GET: RequestHandler = async (event) => {
	const member = await memberWith(event, 'chargers.view');
	if (!member) return signInFirst();
	return json({ chargers: await listChargers(member) });
};

export const POST: RequestHandler = async (event) => {
	const member = await memberWith(event, 'chargers.edit');
	if (!member) return signInFirst();
	let body: unknown;
	try {
		body = await event.request.json();
	} catch {
		return errors(400, [{ path: '', message: 'Send the charger as a JSON object.' }]);
	}
	const parsed = chargerSchema.safeParse(body);
	if (!parsed.success) return errors(400, issuesToErrors(parsed.error.issues));
	const result = await createCharger(member, parsed.data);
	if (!result.ok) return errors(409, [{ path: 'name', message: result.message }]);
	return json({ charger: result.charger }, { status: 201 });
};

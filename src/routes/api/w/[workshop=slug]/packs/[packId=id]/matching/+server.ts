import { json } from '@sveltejs/kit';
import { endpoint, problem, readJson, requireApiMember } from '$lib/server/api';
import { acceptMatching, acceptStatus, proposeMatching } from '$lib/server/matching';
import { matchingAcceptSchema, matchingProposalSchema } from '$lib/schemas/packs';
import type { RequestHandler } from './$types';

/** Proposes a matching (nothing is saved). */
export const POST: RequestHandler = endpoint(async (event) => {
	const member = await requireApiMember(event, 'packs.edit');
	const { request, params } = event;
	const input = await readJson(request, matchingProposalSchema);
	if (input instanceof Response) return input;
	const proposal = await proposeMatching(member, params.packId, input);
	if (!proposal.ok) return problem(409, { message: proposal.message });
	return json(proposal);
});

/** Accepts an assignment (cell ids per group), in one transaction. */
export const PUT: RequestHandler = endpoint(async (event) => {
	const member = await requireApiMember(event, 'packs.edit');
	const { request, params } = event;
	const input = await readJson(request, matchingAcceptSchema);
	if (input instanceof Response) return input;
	const result = await acceptMatching(member, params.packId, input);
	if (!result.ok) return problem(acceptStatus(result.reason), { message: result.message, reason: result.reason });
	return json(result);
});

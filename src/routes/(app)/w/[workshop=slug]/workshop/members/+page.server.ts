import { fail as kitFail } from '@sveltejs/kit';
import { requireMemberWith } from '$lib/server/auth/permissions';
import { fail, message, setError, superValidate, zod4 } from '$lib/server/forms';
import { formatWhen } from '$lib/format';
import { inviteMember, listOpenInvitations, revokeInvitation } from '$lib/server/workshops-invitations';
import { changeRole, listMembers, removalMessage, removeMember } from '$lib/server/workshops-members';
import { invitationIdSchema, inviteSchema, memberSchema, roleChangeSchema } from '$lib/schemas/auth';
import type { Actions, PageServerLoad } from './$types';
import { guardActions } from '$lib/server/input-problems';
import { readForm } from '$lib/server/form-input';

export const load: PageServerLoad = async ({ locals, params, url }) => {
	const member = await requireMemberWith(locals, params, url, 'members.manage');
	const [members, invitations, form] = await Promise.all([
		listMembers(member),
		listOpenInvitations(member),
		superValidate({ role: 'technician' as const }, zod4(inviteSchema), { errors: false })
	]);
	// Expiry in the workshop's own time zone, as everything else at the bench is read.
	const zone = member.workshop.timeZone;
	return {
		members,
		invitations: invitations.map((inv) => ({ ...inv, expires: formatWhen(inv.expiresAt, zone) })),
		form,
		me: member.user.id
	};
};

const refusals = {
	'last-owner': 'A workshop needs at least one owner. Make someone else an owner first.',
	'not-found': 'That person is no longer a member.'
};

export const actions: Actions = guardActions<Actions>({
	invite: async ({ locals, params, url, request }) => {
		const member = await requireMemberWith(locals, params, url, 'members.manage');
		const form = await superValidate(request, zod4(inviteSchema));
		if (!form.valid) return fail(400, { form });
		const result = await inviteMember(member, form.data);
		if (!result.ok) return setError(form, 'email', `${form.data.email} is already a member.`);
		const text = result.mailed
			? `Invitation sent to ${form.data.email}.`
			: `We could not e-mail ${form.data.email}. Send them this link yourself: ${result.link}`;
		return message(form, text);
	},
	changeRole: async ({ locals, params, url, request }) => {
		const member = await requireMemberWith(locals, params, url, 'members.manage');
		const parsed = await readForm(request, roleChangeSchema);
		if (!parsed.ok) return kitFail(400, { memberError: parsed.message });
		const result = await changeRole(member, parsed.data.userId, parsed.data.role);
		if (!result.ok) return kitFail(409, { memberError: refusals[result.reason] });
		return { memberDone: 'Role changed.' };
	},
	remove: async ({ locals, params, url, request }) => {
		const member = await requireMemberWith(locals, params, url, 'members.manage');
		const parsed = await readForm(request, memberSchema);
		if (!parsed.ok) return kitFail(400, { memberError: parsed.message });
		const result = await removeMember(member, parsed.data.userId);
		if (!result.ok) return kitFail(409, { memberError: refusals[result.reason] });
		return { memberDone: removalMessage(result) };
	},
	revoke: async ({ locals, params, url, request }) => {
		const member = await requireMemberWith(locals, params, url, 'members.manage');
		const parsed = await readForm(request, invitationIdSchema);
		if (!parsed.ok) return kitFail(400, { memberError: parsed.message });
		await revokeInvitation(member, parsed.data.invitationId);
		return { memberDone: 'Invitation withdrawn.' };
	}
});

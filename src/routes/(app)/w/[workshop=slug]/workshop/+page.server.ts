import { can } from '$lib/permissions';
import { requireMemberWith } from '$lib/server/auth/permissions';
import { fail, message, superValidate, zod4 } from '$lib/server/forms';
import { setEscalationMinutes, updateWorkshop } from '$lib/server/workshops';
import { listMembers } from '$lib/server/workshops-members';
import { workshopSchema } from '$lib/schemas/auth';
import { escalationSchema } from '$lib/schemas/alert-settings';
import type { Actions, PageServerLoad } from './$types';
import { guardActions } from '$lib/server/input-problems';

export const load: PageServerLoad = async ({ locals, params, url }) => {
	const member = await requireMemberWith(locals, params, url, 'workshop.view');
	const [members, form, escalationForm] = await Promise.all([
		can(member.role, 'members.view') ? listMembers(member) : Promise.resolve(null),
		superValidate({ name: member.workshop.name, timeZone: member.workshop.timeZone }, zod4(workshopSchema)),
		superValidate({ escalationMinutes: member.workshop.escalationMinutes }, zod4(escalationSchema), { id: 'escalation' })
	]);
	return {
		members,
		form,
		escalationForm,
		escalationMinutes: member.workshop.escalationMinutes,
		canEdit: can(member.role, 'workshop.edit'),
		canManage: can(member.role, 'members.manage')
	};
};

export const actions: Actions = guardActions<Actions>({
	rename: async ({ locals, params, url, request }) => {
		// Asked before the form is read: a role that may not rename gets 403 whatever it sent.
		const member = await requireMemberWith(locals, params, url, 'workshop.edit');
		const form = await superValidate(request, zod4(workshopSchema));
		if (!form.valid) return fail(400, { form });
		await updateWorkshop(member, form.data);
		return message(form, 'Saved.');
	},
	escalation: async ({ locals, params, url, request }) => {
		const member = await requireMemberWith(locals, params, url, 'workshop.edit');
		const form = await superValidate(request, zod4(escalationSchema), { id: 'escalation' });
		if (!form.valid) return fail(400, { escalationForm: form });
		await setEscalationMinutes(member, form.data.escalationMinutes);
		return message(form, 'Saved.');
	}
});

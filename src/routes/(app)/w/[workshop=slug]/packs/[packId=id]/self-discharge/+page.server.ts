import { fail } from '@sveltejs/kit';
import { can } from '$lib/permissions';
import { parseDecimal } from '$lib/cells-csv';
import { instantToLocal, localToInstant } from '$lib/plan-form';
import { voltageCheckFormSchema } from '$lib/schemas/self-discharge';
import { requireMemberWith } from '$lib/server/auth/permissions';
import { guardActions } from '$lib/server/input-problems';
import { getSelfDischarge, storeVoltageChecks } from '$lib/server/self-discharge';
import { selfDischargeWords } from '$lib/self-discharge-words';
import type { Actions, PageServerLoad } from './$types';

export const load: PageServerLoad = async ({ locals, params, url }) => {
	const member = await requireMemberWith(locals, params, url, 'packs.viewOwn');
	const view = await getSelfDischarge(member, params.packId);
	const timeZone = member.workshop.timeZone;
	return {
		pack: { id: view.pack.id, name: view.pack.name },
		mode: view.mode,
		targets: view.targets.map((t) => ({ id: t.id, label: t.label, last: t.measures.at(-1) ?? null })),
		words: selfDischargeWords(view),
		timeZone,
		now: instantToLocal(new Date(), timeZone),
		canMeasure: can(member.role, 'measurements.edit')
	};
};

export const actions: Actions = guardActions<Actions>({
	// One round of re-measured volts: all of them stored, or none.
	record: async ({ locals, params, url, request }) => {
		const member = await requireMemberWith(locals, params, url, 'measurements.edit');
		let form: FormData;
		try {
			form = await request.formData();
		} catch {
			return fail(400, { problem: 'The form could not be read. Reload the page and try again.' });
		}
		const targets = form.getAll('target').map(String);
		const volts = form.getAll('volts').map(String);
		const parsed = voltageCheckFormSchema.safeParse({
			measuredAt: String(form.get('measuredAt') ?? ''),
			entries: targets.map((target, i) => ({ target, volts: volts[i] ?? '' }))
		});
		if (!parsed.success || targets.length !== volts.length) {
			return fail(400, { problem: parsed.success ? 'The form could not be read. Reload the page and try again.' : parsed.error.issues[0].message });
		}
		const { measuredAt, entries } = parsed.data;
		let at = new Date();
		if (measuredAt.trim()) {
			const local = localToInstant(measuredAt, member.workshop.timeZone);
			if (!local.ok) return fail(400, { problem: local.message });
			at = local.date;
		}
		const filled = entries
			.filter((e) => e.volts.trim() !== '')
			.map((e) => ({ targetId: e.target, volts: parseDecimal(e.volts.trim()) ?? Number.NaN }));
		const result = await storeVoltageChecks(member, params.packId, { measuredAt: at, entries: filled });
		if (!result.ok) return fail(result.status, { problem: result.message });
		return { done: `Saved ${result.stored} voltage${result.stored === 1 ? '' : 's'}.` };
	}
});

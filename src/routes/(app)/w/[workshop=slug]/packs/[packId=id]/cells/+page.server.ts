import { fail } from '@sveltejs/kit';
import { can } from '$lib/permissions';
import { requireMemberWith } from '$lib/server/auth/permissions';
import { addCells, correctCell, importCellCsv, listBatch, removeCell } from '$lib/server/cells';
import { guardActions } from '$lib/server/input-problems';
import {
	cellBatchSchema,
	cellCorrectionSchema,
	cellCsvFormSchema,
	cellEditFormSchema,
	cellEntryFormSchema,
	cellIdFormSchema
} from '$lib/schemas/cells';
import { parseDecimal } from '$lib/cells-csv';
import type { Actions, PageServerLoad } from './$types';
import { readForm } from '$lib/server/form-input';

export const load: PageServerLoad = async ({ locals, params, url }) => {
	const member = await requireMemberWith(locals, params, url, 'packs.viewOwn');
	const batch = await listBatch(member, params.packId);
	const { pack } = batch;
	return {
		pack: { id: pack.id, name: pack.name, series: pack.series, parallel: pack.parallel },
		chemistryName: batch.spec.chemistry.name,
		cells: batch.cells,
		canMeasure: can(member.role, 'measurements.edit')
	};
};

/** "" → null, "3,61" → 3.61, anything else that is not a number → NaN (the schema names it). */
function numberField(value: string | undefined): number | null {
	const text = String(value ?? '').trim();
	if (text === '') return null;
	return parseDecimal(text) ?? Number.NaN;
}

const messagesOf = (issues: { message: string }[]) => issues.map((i) => i.message).join(' ');

export const actions: Actions = guardActions<Actions>({
	importCsv: async ({ locals, params, url, request }) => {
		const member = await requireMemberWith(locals, params, url, 'measurements.edit');
		const input = await readForm(request, cellCsvFormSchema);
		if (!input.ok) return fail(400, { message: input.message, errors: [] });
		const { csv } = input.data;
		if (!csv.trim()) return fail(400, { message: 'The file is empty.', errors: [] });
		const result = await importCellCsv(member, params.packId, csv);
		// A label already in the batch is a conflict with what is stored (409), like the JSON API says.
		if (!result.ok) return fail(result.reason === 'duplicate-label' ? 409 : 400, { message: result.message, errors: result.errors });
		return { imported: result.imported };
	},
	addCells: async ({ locals, params, url, request }) => {
		const member = await requireMemberWith(locals, params, url, 'measurements.edit');
		const input = await readForm(request, cellEntryFormSchema);
		if (!input.ok) return fail(400, { entryProblem: input.message });
		const parsed = cellBatchSchema.safeParse({
			cells: input.data.rows.map((r) => ({
				label: r.label ?? '',
				volts: numberField(r.volts) ?? Number.NaN,
				resistanceMilliOhms: numberField(r.resistanceMilliOhms),
				capacityAh: numberField(r.capacityAh)
			}))
		});
		if (!parsed.success) {
			const lines = parsed.error.issues.map((i) =>
				typeof i.path[1] === 'number' ? `row ${i.path[1] + 1}: ${i.message}` : i.message
			);
			return fail(400, { entryProblem: lines.slice(0, 5).join(' ') });
		}
		const result = await addCells(member, params.packId, parsed.data.cells);
		if (!result.ok) {
			const status = result.reason === 'duplicate-label' ? 409 : 400;
			return fail(status, { entryProblem: result.errors.map((e) => e.message).join(' ') || result.message });
		}
		return { entryDone: `Saved ${result.imported} cell${result.imported === 1 ? '' : 's'}.` };
	},
	correct: async ({ locals, params, url, request }) => {
		const member = await requireMemberWith(locals, params, url, 'measurements.edit');
		const input = await readForm(request, cellEditFormSchema);
		if (!input.ok) return fail(400, { correctProblem: input.message });
		const form = input.data;
		const parsed = cellCorrectionSchema.safeParse({
			label: form.label?.trim() || undefined,
			volts: numberField(form.volts) ?? Number.NaN,
			resistanceMilliOhms: numberField(form.resistanceMilliOhms),
			capacityAh: numberField(form.capacityAh)
		});
		if (!parsed.success) return fail(400, { correctProblem: messagesOf(parsed.error.issues) });
		const result = await correctCell(member, params.packId, form.cellId, parsed.data);
		if (!result.ok) return fail(400, { correctProblem: result.message });
		// A cell that the edit leaves rejected is news to act on, not a plain confirmation.
		return result.cell.verdict === 'reject' ? { correctWarning: result.message } : { correctDone: result.message };
	},
	remove: async ({ locals, params, url, request }) => {
		const member = await requireMemberWith(locals, params, url, 'measurements.edit');
		const input = await readForm(request, cellIdFormSchema);
		if (!input.ok) return fail(400, { correctProblem: input.message });
		const result = await removeCell(member, params.packId, input.data.cellId);
		if (!result.ok) return fail(409, { correctProblem: result.message });
		return { correctDone: 'Cell removed from the batch.' };
	}
});

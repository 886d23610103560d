import { fail } from '@sveltejs/kit';
import { can } from '$lib/permissions';
import { requireMemberWith } from '$lib/server/auth/permissions';
import { addCells, correctCell, importCellCsv, listBatch, removeCell } from '$lib/server/cells';
import { cellBatchSchema, cellCorrectionSchema } from '$lib/schemas/cells';
import { parseDecimal } from '$lib/cells-csv';
import type { Actions, PageServerLoad } from './$types';

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
function numberField(value: FormDataEntryValue | null | undefined): number | null {
	const text = String(value ?? '').trim();
	if (text === '') return null;
	return parseDecimal(text) ?? Number.NaN;
}

export const actions: Actions = {
	importCsv: async ({ locals, params, url, request }) => {
		const member = await requireMemberWith(locals, params, url, 'measurements.edit');
		const csv = (await request.formData()).get('csv');
		if (typeof csv !== 'string' || !csv.trim()) return fail(400, { message: 'The file is empty.', errors: [] });
		const result = await importCellCsv(member, params.packId, csv);
		if (!result.ok) return fail(400, { message: result.message, errors: result.errors });
		return { imported: result.imported };
	},
	addCells: async ({ locals, params, url, request }) => {
		const member = await requireMemberWith(locals, params, url, 'measurements.edit');
		let raw: { label?: string; volts?: string; resistanceMilliOhms?: string; capacityAh?: string }[];
		try {
			raw = JSON.parse(String((await request.formData()).get('rows') ?? '[]'));
		} catch {
			return fail(400, { entryProblem: 'The entries could not be read. Try again.' });
		}
		const parsed = cellBatchSchema.safeParse({
			cells: raw.map((r) => ({
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
		if (!result.ok) return fail(400, { entryProblem: result.errors.map((e) => e.message).join(' ') || result.message });
		return { entryDone: `Saved ${result.imported} cell${result.imported === 1 ? '' : 's'}.` };
	},
	correct: async ({ locals, params, url, request }) => {
		const member = await requireMemberWith(locals, params, url, 'measurements.edit');
		const form = await request.formData();
		const parsed = cellCorrectionSchema.safeParse({
			label: String(form.get('label') ?? '').trim() || undefined,
			volts: numberField(form.get('volts')) ?? Number.NaN,
			resistanceMilliOhms: numberField(form.get('resistanceMilliOhms')),
			capacityAh: numberField(form.get('capacityAh'))
		});
		if (!parsed.success) return fail(400, { correctProblem: parsed.error.issues.map((i) => i.message).join(' ') });
		const result = await correctCell(member, params.packId, String(form.get('cellId') ?? ''), parsed.data);
		if (!result.ok) return fail(400, { correctProblem: result.message });
		return { correctDone: `${result.cell.label} corrected.` };
	},
	remove: async ({ locals, params, url, request }) => {
		const member = await requireMemberWith(locals, params, url, 'measurements.edit');
		const result = await removeCell(member, params.packId, String((await request.formData()).get('cellId') ?? ''));
		if (!result.ok) return fail(409, { correctProblem: result.message });
		return { correctDone: 'Cell removed from the batch.' };
	}
};

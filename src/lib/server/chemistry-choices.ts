/**
 * The chemistries a cell spec can name, as one select's options: `builtin:<id>` or `profile:<id>`.
 * The built-in names carry their own parentheses ("LFP (lithium iron phosphate)"): the kind follows
 * after a dot, never a second pair of parentheses.
 */
import type { Member } from './auth/permissions';
import { listChemistries } from './chemistry-profiles';

export type ChemistryChoice = { value: string; label: string };

export async function chemistryChoices(member: Member): Promise<ChemistryChoice[]> {
	return (await listChemistries(member)).map((c) =>
		c.chemistryId
			? { value: `builtin:${c.chemistryId}`, label: `${c.name} · built-in` }
			: { value: `profile:${c.chemistryProfileId}`, label: `${c.name} · this workshop’s profile` }
	);
}

/** TanStack Query options for a pack's live data (keys start with the noun: ['packs', id, …]). */
import type { CellFlag, CellVerdict, Match } from '$lib/engine';
import { requestJson } from './api';

export type CellView = {
	id: string;
	label: string;
	arrivalVolts: number;
	resistanceMilliOhms: number | null;
	capacityAh: number | null;
	placement: 'unsorted' | 'group' | 'spare' | 'rejected';
	groupIndex: number | null;
	verdict: CellVerdict['verdict'];
	flags: CellFlag[];
	/** Why the cell is suspect or rejected, in words. */
	reasons: string[];
};

const api = (workshop: string, packId: string) => `/api/w/${workshop}/packs/${packId}`;

export const packKeys = {
	all: (packId: string) => ['packs', packId] as const,
	cells: (packId: string) => ['packs', packId, 'cells'] as const
};

/** The batch with its verdicts; refetched when the tab comes back, so other people's entries show up. */
export function packCellsQuery(workshop: string, packId: string) {
	return {
		queryKey: packKeys.cells(packId),
		queryFn: async () => (await requestJson<{ cells: CellView[] }>(`${api(workshop, packId)}/cells`)).cells,
		refetchOnWindowFocus: true
	};
}

export type Proposal = Match & {
	eligible: number;
	excludedSuspect: number;
	excludedRejected: number;
	/** Suspect cells placed because the good ones were short, least risky first, with their reasons. */
	suspectsUsed: { id: string; label: string; reasons: string[] }[];
	suspectsLeft: number;
	suspectNote: string | null;
	/** The batch this proposal was made from; accepting sends it back. */
	version: string;
};

export function proposeMatching(workshop: string, packId: string, includeSuspect: boolean) {
	return requestJson<Proposal>(`${api(workshop, packId)}/matching`, { method: 'POST', body: { includeSuspect } });
}

export function acceptMatching(workshop: string, packId: string, groups: string[][], replace: boolean, version: string) {
	return requestJson<{ ok: true; placed: number; spares: number }>(`${api(workshop, packId)}/matching`, {
		method: 'PUT',
		body: { groups, replace, version }
	});
}

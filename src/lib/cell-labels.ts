/** The labels a batch counts on with: after T56 comes T57, after C9 comes C10. */

/** The label after `label`: same prefix, the number one up with its zero padding kept; '' when it ends in no number. */
export function followingLabel(label: string): string {
	const m = /^(.*?)(\d+)$/.exec(label);
	return m ? `${m[1]}${String(Number(m[2]) + 1).padStart(m[2].length, '0')}` : '';
}

/** The label after the highest-numbered one of a batch; 'C1' for a batch with no numbered label. */
export function nextLabel(labels: readonly string[]): string {
	let best: { label: string; n: number } | null = null;
	for (const label of labels) {
		const m = /(\d+)$/.exec(label);
		if (m && (!best || Number(m[1]) > best.n)) best = { label, n: Number(m[1]) };
	}
	return best ? followingLabel(best.label) : 'C1';
}

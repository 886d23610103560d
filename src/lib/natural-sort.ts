/**
 * Labels in the order a person counts them: C2 before C10, T9 before T10, case ignored. Every list
 * and export of cells sorts through here (the database's own text order puts C10 before C2).
 */
const collator = new Intl.Collator('en', { numeric: true, sensitivity: 'base' });

/** Compares two labels naturally; labels equal but for case fall back to code-point order, so the order is total. */
export function compareLabels(a: string, b: string): number {
	return collator.compare(a, b) || (a < b ? -1 : a > b ? 1 : 0);
}

/** A new array sorted by `label`, naturally. */
export function sortByLabel<T extends { label: string }>(items: readonly T[]): T[] {
	return [...items].sort((x, y) => compareLabels(x.label, y.label));
}

/**
 * Line colours for charts: a long qualitative palette (one colour per group), kept apart from the
 * state colours (steady / watch / act now / idle), medium in lightness so each line reads on both
 * the light and the dark panel. Past twelve lines the colours repeat with a dotted line, so that
 * G1 and G13 still differ by more than colour.
 */
const colours = [
	'#4e79a7', // blue
	'#f28e2b', // orange
	'#76b7b2', // teal
	'#b07aa1', // mauve
	'#9c755f', // brown
	'#edc948', // straw
	'#5b8bd9', // cornflower
	'#d37295', // pink
	'#8cd17d', // light green
	'#a0cbe8', // light blue
	'#fabfd2', // blush
	'#86bcb6' // sea green
];

export type LineStyle = { color: string; dash: number[] };

/** The colour and dash of the n-th line (0-based). */
export function lineStyle(n: number): LineStyle {
	const round = Math.floor(n / colours.length);
	return { color: colours[n % colours.length], dash: round === 0 ? [] : round === 1 ? [2, 3] : [8, 3, 2, 3] };
}

/** Limits are drawn dashed, in the ink colour, with their value in the legend. */
export const LIMIT_DASH = [6, 4];

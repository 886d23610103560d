import type { ChartOptions } from 'chart.js';

// Types only from chart.js: this module is imported by the chart components alone, which the pages
// load on demand, and must not pull chart.js into a page's first load by itself.

/** A CSS custom property of the page (the theme's tokens), or the fallback where there is no document. */
export function cssVar(name: string, fallback: string): string {
	if (typeof document === 'undefined') return fallback;
	return getComputedStyle(document.documentElement).getPropertyValue(name).trim() || fallback;
}

/** The x axis: times in the workshop's zone (range in ms since the epoch), or one label per point. */
export type ChartXAxis = { type: 'time'; timeZone: string; min?: number; max?: number } | { type: 'category'; title: string };

/**
 * The line charts' options: no animation, the nearest point's tooltip, axes and grid in the theme's
 * muted ink and line colours (read when called, so call it again after a theme change).
 * `autoSkipPadding` is the room in px between the x axis's labels.
 */
export function lineChartOptions({ x, yTitle, autoSkipPadding }: { x: ChartXAxis; yTitle: string; autoSkipPadding: number }): ChartOptions<'line'> {
	const muted = cssVar('--cs-ink-muted', '#6b655d');
	const grid = cssVar('--cs-line', '#e4dfd8');
	const axisLook = (title: string) => ({ grid: { color: grid }, title: { display: true, text: title, color: muted } });
	const xTicks = { ticks: { color: muted, maxRotation: 0, autoSkipPadding } };
	return {
		responsive: true,
		maintainAspectRatio: false,
		animation: false,
		interaction: { mode: 'nearest', intersect: false },
		plugins: { tooltip: { enabled: true } },
		scales: {
			x:
				x.type === 'time'
					? {
							type: 'time',
							min: x.min,
							max: x.max,
							// Read by chart-date-adapter.ts: ticks and tooltips on the workshop's clock.
							adapters: { date: { timeZone: x.timeZone } },
							time: { minUnit: 'minute', tooltipFormat: 'day-time' },
							...xTicks,
							...axisLook(`Time (${x.timeZone})`)
						}
					: { type: 'category', ...xTicks, ...axisLook(x.title) },
			y: { ticks: { color: muted }, ...axisLook(yTitle) }
		}
	};
}

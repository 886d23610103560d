import AxeBuilder from '@axe-core/playwright';
import { expect, type Page } from '@playwright/test';

/**
 * Opens `path` and runs axe-core's WCAG 2 A/AA rules (and best practice) in the light theme; in the
 * dark theme only contrast, which is all a theme changes (look.md asks for AA contrast in both).
 */
export async function expectAccessible(page: Page, path: string, where = '') {
	await page.goto(path);
	for (const colorScheme of ['light', 'dark'] as const) {
		await page.emulateMedia({ colorScheme });
		// Only violations are reported in full (passes and incomplete checks are not collected node by
		// node), which is most of axe's time on a long page.
		const axe = new AxeBuilder({ page }).options({ resultTypes: ['violations'] });
		if (colorScheme === 'dark') axe.withRules(['color-contrast', 'link-in-text-block']);
		else axe.withTags(['wcag2a', 'wcag2aa', 'best-practice']);
		const { violations } = await axe.analyze();
		const found = violations.map((v) => `${v.id} (${v.impact}) at ${v.nodes.map((n) => n.target.join(' ')).slice(0, 3).join(', ')}`);
		expect(found, `${path} in the ${colorScheme} theme${where ? ` at ${where}` : ''}`).toEqual([]);
	}
}

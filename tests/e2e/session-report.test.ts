import { expect, test, type Browser, type Page } from '@playwright/test';
import { getDocument } from 'pdfjs-dist/legacy/build/pdf.mjs';
import { expectAccessible } from './axe';
import { useDemoServer } from './demo-server';
import { signIn } from './helpers';

// The demo's cargo trike pack, as its owner (the demo's viewer) receives it: the report of its
// finished charge after a month of riding, printed to PDF on A4 and on Letter by Chromium, and the
// PDF's text read back by an independent reader (pdfjs-dist). The demo runs in a server of its own
// (tests/e2e/demo-server.ts): the demo loads only into an empty database.
const demo = useDemoServer();

type PdfText = { pages: number; text: string; outside: string[] };

/** The PDF's text, page by page joined, and any text item that reaches past its page's edges. */
async function pdfText(buffer: Buffer): Promise<PdfText> {
	const doc = await getDocument({ data: new Uint8Array(buffer) }).promise;
	const parts: string[] = [];
	const outside: string[] = [];
	for (let n = 1; n <= doc.numPages; n++) {
		const page = await doc.getPage(n);
		const [x0, y0, x1, y1] = page.view;
		const content = await page.getTextContent();
		for (const item of content.items) {
			if (!('str' in item)) continue;
			parts.push(item.str, item.hasEOL ? '\n' : '');
			const [x, y] = [item.transform[4], item.transform[5]];
			if (item.str.trim() && (x < x0 || y < y0 || x + item.width > x1 + 0.5 || y > y1)) outside.push(`p${n}: ${item.str}`);
		}
	}
	await doc.destroy();
	// Line breaks in the middle of a sentence are the layout's, not the text's.
	return { pages: doc.numPages, text: parts.join('').replace(/\s+/g, ' '), outside };
}

async function openReport(browser: Browser): Promise<Page> {
	const context = await browser.newContext({ baseURL: demo().baseURL });
	const page = await context.newPage();
	await signIn(page, 'viewer@larkfield.test', demo().password);
	await expect(page).toHaveURL(/\/w\/larkfield\//, { timeout: 20_000 });
	await page.goto('/w/larkfield/sessions');
	await page.getByRole('link', { name: /Charge after a month of riding/ }).first().click();
	await page.getByRole('link', { name: 'Printable report' }).click();
	await expect(page.getByRole('heading', { level: 1, name: /Cargo trike pack/ })).toBeVisible({ timeout: 20_000 });
	return page;
}

test("the trike's finished charge prints to PDF on A4 and Letter with the pack, the drift alert and the safety note", async ({ browser }) => {
	test.setTimeout(120_000);
	const page = await openReport(browser);
	await expect(page.getByRole('button', { name: 'Save as PDF' })).toBeVisible();
	await expect(page.getByText('pick “Save as PDF” as the printer')).toBeVisible();

	for (const format of ['A4', 'Letter'] as const) {
		const pdf = await pdfText(await page.pdf({ format }));
		const { text } = pdf;
		expect(pdf.pages, format).toBeGreaterThan(0);
		expect(text, format).toContain('Cargo trike pack');
		expect(text, format).toContain('13S4P');
		expect(text, format).toContain('Larkfield Battery Bench');
		// The drift alert of group 7, with the technician's acknowledgement and note.
		expect(text, format).toMatch(/Group 7: drifting since the last charge/);
		expect(text, format).toMatch(/Acknowledged by Priya Nandakumar/);
		expect(text, format).toContain('balance lead was loose at the BMS plug');
		// Who did what, from the audit trail.
		expect(text, format).toContain('Session started');
		// The full safety note: its first words and its last.
		expect(text, format).toContain('Charging lithium cells can start a fire that spreads fast.');
		expect(text, format).toContain('never charge while asleep or away');
		expect(text, format).toContain('local codes and licensed practice');
		// Print leaves the app's navigation and the button out.
		expect(text, format).not.toContain('Save as PDF');
		expect(text, format).not.toMatch(/\bChargers\b/);
		// Nothing reaches past the page's edges (Letter is wider and shorter than A4).
		expect(pdf.outside, format).toEqual([]);
	}
});

test('the report passes axe in light and dark', async ({ browser }) => {
	test.setTimeout(120_000);
	const page = await openReport(browser);
	await expectAccessible(page, new URL(page.url()).pathname);
});

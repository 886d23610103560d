// Draws Cellsitter's app icons into static/icons/ (run by hand after changing the mark; the
// results are committed): `node scripts/icons.mjs`.
//
// The mark is the app's own logo (src/lib/components/Logo.svelte: three cells in a row with a
// copper band), light on a dark tile, in look.md's dark-theme colours. Sizes and purposes:
// - icon-192.png, icon-512.png, icon.svg: the manifest's icons (a rounded tile, transparent corners)
// - icon-maskable-512.png: full bleed; the mark stays inside the middle 80 % circle that every
//   mask shape keeps (the W3C manifest spec's safe zone)
// - apple-touch-icon.png (180 × 180): full bleed and opaque, iOS rounds the corners itself
// - badge-96.png: white on transparent; Android shows only its shape in the status bar
import { mkdir, writeFile } from 'node:fs/promises';
import path from 'node:path';
import { fileURLToPath } from 'node:url';
import sharp from 'sharp';

const out = path.join(path.dirname(fileURLToPath(import.meta.url)), '..', 'static', 'icons');

// look.md, dark theme: surface, ink, copper.
const TILE = '#151413';
const CELLS = '#ece8e2';
const BAND = '#e08a4f';

/** Logo.svelte's mark in its own 32-unit box, centred on (16, 16). */
function mark(cells, band) {
	const cell = (x) => `<rect x="${x}" y="7" width="7" height="18" rx="2" fill="none" stroke="${cells}" stroke-width="2"/>`;
	return `${cell(3)}${cell(12.5)}${cell(22)}<rect x="2" y="14" width="28" height="4" rx="1" fill="${band}"/>`;
}

/**
 * An icon `size` pixels square. `markWidth`: the mark's width (28 units) as a share of the icon;
 * `corner`: the tile's corner radius as a share of the icon (0: full bleed, null: no tile).
 */
function icon(size, { markWidth, corner, cells = CELLS, band = BAND }) {
	const scale = (markWidth * size) / 28;
	const tile = corner === null ? '' : `<rect width="${size}" height="${size}" rx="${corner * size}" fill="${TILE}"/>`;
	return (
		`<svg xmlns="http://www.w3.org/2000/svg" width="${size}" height="${size}" viewBox="0 0 ${size} ${size}">` +
		`${tile}<g transform="translate(${size / 2} ${size / 2}) scale(${scale}) translate(-16 -16)">${mark(cells, band)}</g></svg>`
	);
}

// The mark's half-diagonal is √(14² + 10²) ≈ 17.2 units of its 28-unit width (0.614 of it): at
// 0.6 of the icon it reaches 0.37 of the icon from the centre, inside the 0.40 safe circle.
const files = [
	{ name: 'icon.svg', svg: icon(512, { markWidth: 0.72, corner: 0.22 }) },
	{ name: 'icon-192.png', svg: icon(192, { markWidth: 0.72, corner: 0.22 }) },
	{ name: 'icon-512.png', svg: icon(512, { markWidth: 0.72, corner: 0.22 }) },
	{ name: 'icon-maskable-512.png', opaque: true, svg: icon(512, { markWidth: 0.6, corner: 0 }) },
	{ name: 'apple-touch-icon.png', opaque: true, svg: icon(180, { markWidth: 0.7, corner: 0 }) },
	{ name: 'badge-96.png', svg: icon(96, { markWidth: 0.86, corner: null, cells: '#ffffff', band: '#ffffff' }) }
];

await mkdir(out, { recursive: true });
for (const file of files) {
	const target = path.join(out, file.name);
	if (file.name.endsWith('.svg')) await writeFile(target, file.svg + '\n');
	else {
		let image = sharp(Buffer.from(file.svg));
		// Full-bleed icons carry no alpha channel at all (iOS shows transparency as black).
		if (file.opaque) image = image.flatten({ background: TILE });
		await image.png({ compressionLevel: 9, palette: true }).toFile(target);
	}
	console.log(`wrote static/icons/${file.name}`);
}

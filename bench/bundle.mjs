// JavaScript shipped to the run screen (/w/[workshop]/sessions/[sessionId]), in kB gzip, from a
// build: the route's layouts and page in the build's server manifest, their modules from Vite's
// client manifest (.vite/manifest.json), each file gzipped with zlib at level 9 (what adapter-node's
// precompress serves). "At load" is the client entry plus every static import of those nodes;
// "with lazy chunks" adds what they import dynamically (loaded once the page asks, e.g. charts).
import fs from 'node:fs';
import path from 'node:path';
import { pathToFileURL } from 'node:url';
import zlib from 'node:zlib';

export const RUN_ROUTE = '/(app)/w/[workshop=slug]/sessions/[sessionId=id]';

/** The main pages whose JavaScript docs/performance.md lists (route ids of the build's manifest). */
const W = '/(app)/w/[workshop=slug]';
export const MAIN_PAGES = [
	{ name: 'Landing page', route: '/' },
	{ name: 'Sign in', route: '/(auth)/login' },
	{ name: 'Packs', route: `${W}/packs` },
	{ name: 'A pack', route: `${W}/packs/[packId=id]` },
	{ name: 'Cells of a pack', route: `${W}/packs/[packId=id]/cells` },
	{ name: 'Matching', route: `${W}/packs/[packId=id]/matching` },
	{ name: 'Pack history', route: `${W}/packs/[packId=id]/history` },
	{ name: 'Sessions', route: `${W}/sessions` },
	{ name: 'Plan a session', route: `${W}/sessions/new` },
	{ name: 'Run screen', route: RUN_ROUTE },
	{ name: 'Session report', route: `${W}/sessions/[sessionId=id]/report` },
	{ name: 'Alerts', route: `${W}/alerts` },
	{ name: 'An alert', route: `${W}/alerts/[alertId=id]` },
	{ name: 'Workshop', route: `${W}/workshop` }
];

/** The build's server manifest: server/manifest.js, or the chunk adapter-node bundled it into. */
async function serverManifest(buildDir) {
	const plain = path.join(buildDir, 'server', 'manifest.js');
	const chunks = path.join(buildDir, 'server', 'chunks');
	const file = fs.existsSync(plain)
		? plain
		: path.join(chunks, fs.readdirSync(chunks).find((f) => /^manifest\.js-.*\.js$/.test(f)) ?? 'manifest.js');
	const mod = await import(pathToFileURL(file).href);
	const manifest = mod.manifest ?? Object.values(mod).find((v) => v && typeof v === 'object' && '_' in v);
	if (!manifest) throw new Error(`No server manifest in ${file}.`);
	return manifest;
}

export async function runScreenJs(buildDir, viteManifestFile, routeId = RUN_ROUTE) {
	const manifest = await serverManifest(buildDir);
	const route = manifest._.routes.find((r) => r.id === routeId);
	if (!route?.page) throw new Error(`No page route ${routeId} in the build.`);
	const nodeIndexes = [...route.page.layouts.filter((n) => n !== undefined), route.page.leaf];
	const vite = JSON.parse(fs.readFileSync(viteManifestFile, 'utf8'));
	const byKey = new Map(Object.entries(vite));

	const entryKeys = [...byKey].filter(([, c]) => c.isEntry).map(([k]) => k);
	const nodeKey = (n) => [...byKey.keys()].find((k) => k.endsWith(`/nodes/${n}.js`));
	const roots = [...entryKeys.filter((k) => !/\/nodes\/\d+\.js$/.test(k)), ...nodeIndexes.map(nodeKey)];
	if (roots.some((k) => k === undefined)) throw new Error('A node of the run page is missing from the Vite manifest.');

	const staticSet = new Set();
	const visit = (key, set, follow) => {
		if (set.has(key)) return;
		set.add(key);
		const chunk = byKey.get(key);
		for (const k of chunk.imports ?? []) visit(k, set, follow);
		if (follow) for (const k of chunk.dynamicImports ?? []) visit(k, set, follow);
	};
	// The client entry (app.js) imports every node dynamically: follow static imports only there.
	for (const k of roots) visit(k, staticSet, false);
	// Then what any of those loads on demand (a chart library after first paint), except from the
	// entries, whose dynamic imports are every other page of the app.
	const allSet = new Set(staticSet);
	for (const k of staticSet) {
		if (byKey.get(k).isEntry && !/\/nodes\/\d+\.js$/.test(k)) continue;
		for (const d of byKey.get(k).dynamicImports ?? []) {
			if (/\/nodes\/\d+\.js$/.test(d)) continue;
			visit(d, allSet, true);
		}
	}

	const sizeOf = (key) => {
		const bytes = fs.readFileSync(path.join(buildDir, 'client', byKey.get(key).file));
		return { raw: bytes.length, gzip: zlib.gzipSync(bytes, { level: 9 }).length };
	};
	const total = (set) => {
		const files = [...set].filter((k) => byKey.get(k).file.endsWith('.js'));
		return files.map(sizeOf).reduce((s, x) => ({ raw: s.raw + x.raw, gzip: s.gzip + x.gzip, files: s.files + 1 }), { raw: 0, gzip: 0, files: 0 });
	};
	const largest = [...allSet]
		.filter((k) => byKey.get(k).file.endsWith('.js'))
		.map((k) => ({ module: k, file: byKey.get(k).file, lazy: !staticSet.has(k), ...sizeOf(k) }))
		.sort((a, b) => b.gzip - a.gzip)
		.slice(0, 6);
	return { route: routeId, nodes: nodeIndexes, atLoad: total(staticSet), withLazy: total(allSet), largest };
}

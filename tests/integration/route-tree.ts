/**
 * Every way into the app, read from src/routes at test time: each +server.ts method, each load of a
 * +page.server.ts / +page.ts / +layout.server.ts / +layout.ts and each named form action. The
 * authorization matrix checks that every entry found here has a row of its own.
 */
import { readdirSync } from 'node:fs';
import path from 'node:path';

export const routesDir = path.resolve('src/routes');

const routeFiles = ['+server.ts', '+page.server.ts', '+page.ts', '+layout.server.ts', '+layout.ts'];
const httpMethods = ['GET', 'HEAD', 'POST', 'PUT', 'PATCH', 'DELETE', 'OPTIONS'];

export type RouteEntry = {
	/** "<file under src/routes> <GET|POST|…|load|action:name>": the matrix's row key. */
	key: string;
	file: string;
	/** The URL pattern: groups dropped, params kept ("/w/[workshop=slug]/packs/[packId=id]"). */
	pattern: string;
	/** A method of +server.ts, 'load', or 'action:<name>'. */
	entry: string;
	/** The module's export that answers it. */
	run: (event: unknown) => unknown;
};

function walk(dir: string): string[] {
	const found: string[] = [];
	for (const item of readdirSync(dir, { withFileTypes: true })) {
		const full = path.join(dir, item.name);
		if (item.isDirectory()) found.push(...walk(full));
		else if (routeFiles.includes(item.name)) found.push(full);
	}
	return found;
}

/** The route's URL pattern from its folder: "(app)" and other groups leave no trace in the URL. */
export function patternOf(file: string): string {
	const parts = path.dirname(file).split('/').filter((p) => p !== '.' && !/^\(.*\)$/.test(p));
	return `/${parts.join('/')}`;
}

/** The URL for a pattern with its params filled in (an optional [[param]] is given when known). */
export function fillPattern(pattern: string, params: Record<string, string>): string {
	return pattern.replace(/\[\[?([a-zA-Z]+)(?:=[a-z]+)?\]\]?/g, (_, name: string) => {
		const value = params[name];
		if (value === undefined) throw new Error(`no value for the route param "${name}" of ${pattern}`);
		return encodeURIComponent(value);
	});
}

/** The param names of a pattern, as SvelteKit would pass them. */
export function paramNames(pattern: string): string[] {
	return [...pattern.matchAll(/\[\[?([a-zA-Z]+)(?:=[a-z]+)?\]\]?/g)].map((m) => m[1]);
}

/** Every route entry of the tree, sorted by key; the modules are imported to read their exports. */
export async function routeTree(): Promise<RouteEntry[]> {
	const entries: RouteEntry[] = [];
	for (const full of walk(routesDir)) {
		const file = path.relative(routesDir, full);
		const pattern = patternOf(file);
		const mod = (await import(/* @vite-ignore */ full)) as Record<string, unknown>;
		const add = (entry: string, run: unknown) => {
			if (typeof run !== 'function') throw new Error(`${file}: ${entry} is not a function`);
			entries.push({ key: `${file} ${entry}`, file, pattern, entry, run: run as RouteEntry['run'] });
		};
		if (path.basename(file) === '+server.ts') {
			for (const method of httpMethods) if (method in mod) add(method, mod[method]);
			// A fallback handler answers every other method.
			if ('fallback' in mod) add('fallback', mod.fallback);
			continue;
		}
		if ('load' in mod) add('load', mod.load);
		const actions = (mod.actions ?? {}) as Record<string, unknown>;
		for (const name of Object.keys(actions)) add(`action:${name}`, actions[name]);
	}
	return entries.sort((a, b) => a.key.localeCompare(b.key));
}

import { serverEnvSchema, type ServerEnv } from '$lib/schemas/env';

let cached: ServerEnv | undefined;

/** The parsed server environment. Throws once, at first use, with every problem listed. */
export function serverEnv(): ServerEnv {
	if (cached) return cached;
	const parsed = serverEnvSchema.safeParse(process.env);
	if (!parsed.success) {
		const lines = parsed.error.issues.map((i) => `  ${i.path.join('.')}: ${i.message}`);
		throw new Error(`Cellsitter's environment is not valid:\n${lines.join('\n')}`);
	}
	cached = parsed.data;
	return cached;
}

/** Forgets the parsed environment so the next serverEnv() reads process.env again (tests only). */
export function rereadServerEnv(): void {
	cached = undefined;
}

// adapter-node's defaults when HOST / PORT are not set.
const ADAPTER_HOST = '0.0.0.0';
const ADAPTER_PORT = '3000';
// vite's dev server (vite.config.ts) listens on 127.0.0.1:5173.
const DEV_ORIGIN = 'http://127.0.0.1:5173';

function isLoopback(host: string): boolean {
	const bare = host.replace(/^\[|\]$/g, '').toLowerCase();
	return bare === 'localhost' || bare === '::1' || /^127\.\d{1,3}\.\d{1,3}\.\d{1,3}$/.test(bare);
}

const missingOrigin = (host: string) =>
	`ORIGIN is not set, and the server listens on ${host}, not only on this machine: ` +
	`links in e-mails would take their address from whatever Host header a request sends. ` +
	`Set ORIGIN to the address people open, e.g. ORIGIN=https://bench.example.org ` +
	`(or HOST=127.0.0.1 for a server only this machine reaches). See docs/configuration.md.`;

let devServer = false;

/**
 * Checks at start-up that links can be built: ORIGIN is set, or the server listens on loopback
 * only. Throws a message naming ORIGIN otherwise. `dev`: vite's dev server (always loopback).
 */
export function checkPublicOrigin(options: { dev: boolean }): void {
	devServer = options.dev;
	publicOrigin();
}

/**
 * The origin of every link Cellsitter sends out (reset, invitation): ORIGIN, never a request's
 * Host. Without ORIGIN, only a loopback listener has a known origin (http://HOST:PORT).
 */
export function publicOrigin(): string {
	const env = serverEnv();
	if (env.ORIGIN) return new URL(env.ORIGIN).origin;
	if (devServer && !env.HOST) return DEV_ORIGIN;
	const host = env.HOST ?? ADAPTER_HOST;
	if (!isLoopback(host)) throw new Error(missingOrigin(host));
	const name = host.includes(':') && !host.startsWith('[') ? `[${host}]` : host;
	return `http://${name}:${env.PORT ?? ADAPTER_PORT}`;
}

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

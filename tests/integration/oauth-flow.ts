/** Pieces for driving the OAuth start and callback routes as a browser would, without a server. */

/** The redirect a route throws (SvelteKit's `redirect()`); fails when the route returns instead. */
export function redirectOf(fn: () => unknown): Promise<{ status: number; location: string }> {
	return Promise.resolve()
		.then(fn)
		.then(
			() => {
				throw new Error('expected a redirect');
			},
			(e: { status: number; location: string }) => e
		);
}

/** A cookie jar with the part of SvelteKit's `cookies` the OAuth routes use. */
export function cookieJar(initial: [string, string][] = []) {
	const jar = new Map<string, string>(initial);
	return {
		jar,
		cookies: {
			get: (name: string) => jar.get(name),
			set: (name: string, value: string) => void jar.set(name, value),
			delete: (name: string) => void jar.delete(name)
		}
	};
}

/** fetch for the JSON API: parsed body, or an ApiError carrying the server's plain-words message. */
export class ApiError extends Error {
	constructor(
		readonly status: number,
		message: string,
		readonly errors: { path: string; message: string }[] = [],
		/** The server's reason code, when it gives one (e.g. 'pack-changed'). */
		readonly reason?: string
	) {
		super(message);
	}
}

export async function requestJson<T>(url: string, init: { method?: string; body?: unknown } = {}): Promise<T> {
	const response = await fetch(url, {
		method: init.method ?? 'GET',
		headers: init.body === undefined ? { accept: 'application/json' } : { accept: 'application/json', 'content-type': 'application/json' },
		body: init.body === undefined ? undefined : JSON.stringify(init.body)
	});
	const body = await response.json().catch(() => null);
	if (!response.ok) {
		throw new ApiError(response.status, body?.message ?? `The server answered ${response.status}.`, body?.errors ?? [], body?.reason);
	}
	return body as T;
}

/** Reads the local fake services (only when CELLSITTER_FAKES=1): the fake SMTP server's mailbox, the fake push service's pushes. */
import { serverEnv } from './env';

export type FakeMessage = {
	id: string;
	from: string;
	to: string[];
	subject: string;
	text: string;
	html: string;
	receivedAt: string;
};

export function fakesEnabled(): boolean {
	return serverEnv().CELLSITTER_FAKES;
}

/** A list the fakes keep (GET `pathname`, one optional filter); [] with the fakes off. */
async function fakeList<T>(pathname: string, filter: [name: string, value: string | undefined], what: string): Promise<T[]> {
	const base = serverEnv().FAKES_URL;
	if (!base) return [];
	const url = new URL(pathname, base);
	if (filter[1]) url.searchParams.set(filter[0], filter[1]);
	const response = await fetch(url);
	if (!response.ok) throw new Error(`${what} answered ${response.status}`);
	return (await response.json()) as T[];
}

export async function fakeMailbox(to?: string): Promise<FakeMessage[]> {
	return fakeList<FakeMessage>('/messages', ['to', to], 'fake mailbox');
}

/** A push the fake push service received and decrypted (tests/fakes/push.js, `GET /pushes`). */
export type FakePush = {
	id: string;
	endpoint: string;
	subscriptionId: string;
	/** The decrypted payload as text; `json` is it parsed, or null when it is not JSON. */
	payload: string;
	json: unknown;
	urgency: string;
	ttl: number;
	topic: string | null;
	receivedAt: string;
};

/** A subscription at the fake push service, shaped as a browser's PushSubscription.toJSON(). */
export type FakePushSubscription = {
	endpoint: string;
	expirationTime: null;
	keys: { p256dh: string; auth: string };
};

function fakesBase(): string {
	const base = serverEnv().FAKES_URL;
	if (!base) throw new Error('the local fakes are off (CELLSITTER_FAKES=1 and FAKES_URL)');
	return base;
}

/** The pushes that reached the fake push service, newest first; only one endpoint's when given. */
export async function fakePushes(endpoint?: string): Promise<FakePush[]> {
	return fakeList<FakePush>('/pushes', ['endpoint', endpoint], 'fake push service');
}

/**
 * A new subscription at the fake push service, as a browser would make one. With
 * `applicationServerKey` (the VAPID public key) it only accepts pushes signed by that key.
 */
export async function makeFakePushSubscription(options: { applicationServerKey?: string } = {}): Promise<FakePushSubscription> {
	const response = await fetch(new URL('/push/subscriptions', fakesBase()), {
		method: 'POST',
		headers: { 'content-type': 'application/json' },
		body: JSON.stringify(options)
	});
	if (response.status !== 201) throw new Error(`fake push service answered ${response.status} to a new subscription`);
	return (await response.json()) as FakePushSubscription;
}

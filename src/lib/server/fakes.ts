/** Reads the local fake services (only when CELLSITTER_FAKES=1): the mailbox of the fake SMTP server. */
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

export async function fakeMailbox(to?: string): Promise<FakeMessage[]> {
	const base = serverEnv().FAKES_URL;
	if (!base) return [];
	const url = new URL('/messages', base);
	if (to) url.searchParams.set('to', to);
	const response = await fetch(url);
	if (!response.ok) throw new Error(`fake mailbox answered ${response.status}`);
	return (await response.json()) as FakeMessage[];
}

import { createECDH, randomBytes, randomUUID } from 'node:crypto';
import { eq } from 'drizzle-orm';
import { describe, expect, it } from 'vitest';
import { MAX_PUSH_DEVICES } from '$lib/schemas/push';
import { db } from '$lib/server/db';
import { pushSubscriptions } from '$lib/server/db/schema';
import type { Member } from '$lib/server/auth/permissions';
import * as keyApi from '../../src/routes/api/push-subscriptions/key/+server';
import * as pushApi from '../../src/routes/api/push-subscriptions/+server';
import { apiEvent, memberOf, signUpOwner } from './helpers';

type Event = Parameters<typeof pushApi.POST>[0];
type Device = { id: string; endpoint: string; label: string };
const PATH = '/api/push-subscriptions';

/** A person of their own (push is per person, not per workshop). */
async function person(label: string): Promise<Member> {
	const owner = await signUpOwner(label);
	return memberOf(owner.userId, owner.workshopSlug);
}

/** What a browser's PushSubscription.toJSON() holds: a real P-256 public key and a 16-byte secret. */
function browserSubscription() {
	const ecdh = createECDH('prime256v1');
	ecdh.generateKeys();
	return {
		// `.invalid` never resolves (RFC 2606): nothing here is ever sent.
		endpoint: `https://push-service.invalid/send/${randomUUID()}`,
		expirationTime: null,
		keys: { p256dh: ecdh.getPublicKey().toString('base64url'), auth: randomBytes(16).toString('base64url') }
	};
}

const post = (who: Member | null, body: unknown) => pushApi.POST(apiEvent<Event>(who, PATH, {}, { method: 'POST', body }));
const remove = (who: Member | null, body: unknown) => pushApi.DELETE(apiEvent<Event>(who, PATH, {}, { method: 'DELETE', body }));
async function listed(who: Member): Promise<Device[]> {
	const answer = await pushApi.GET(apiEvent<Event>(who, PATH, {}));
	expect(answer.status).toBe(200);
	return ((await answer.json()) as { devices: Device[] }).devices;
}
const rowsOf = (endpoint: string) => db.select().from(pushSubscriptions).where(eq(pushSubscriptions.endpoint, endpoint));
const countOf = async (who: Member) => (await db.select().from(pushSubscriptions).where(eq(pushSubscriptions.userId, who.user.id))).length;

describe('push subscriptions API', () => {
	it('keeps one row per endpoint: a second post refreshes the keys and keeps the label', async () => {
		const me = await person('push-upsert');
		const sub = browserSubscription();
		const first = await post(me, { ...sub, label: 'Chrome on Android' });
		expect(first.status).toBe(201);
		expect(((await first.json()) as { device: Device }).device).toMatchObject({ endpoint: sub.endpoint, label: 'Chrome on Android' });

		const renewed = browserSubscription().keys;
		const again = await post(me, { endpoint: sub.endpoint, keys: renewed });
		expect(again.status).toBe(200);
		const rows = await rowsOf(sub.endpoint);
		expect(rows).toHaveLength(1);
		expect(rows[0]).toMatchObject({ userId: me.user.id, p256dh: renewed.p256dh, auth: renewed.auth, label: 'Chrome on Android' });
		expect((await listed(me)).map((d) => d.endpoint)).toEqual([sub.endpoint]);
	});

	it('accepts keys with base64 padding and keeps them without it', async () => {
		const me = await person('push-padding');
		const sub = browserSubscription();
		const answer = await post(me, { ...sub, keys: { p256dh: `${sub.keys.p256dh}=`, auth: `${sub.keys.auth}==` } });
		expect(answer.status).toBe(201);
		const [row] = await rowsOf(sub.endpoint);
		expect(row).toMatchObject({ p256dh: sub.keys.p256dh, auth: sub.keys.auth });
	});

	it('moves an endpoint to the person who registers it next (the device changed hands)', async () => {
		const first = await person('push-first');
		const second = await person('push-second');
		const sub = browserSubscription();
		expect((await post(first, { ...sub, label: 'Workshop tablet' })).status).toBe(201);

		const moved = await post(second, sub);
		expect(moved.status).toBe(201);
		expect(((await moved.json()) as { moved: boolean }).moved).toBe(true);
		const rows = await rowsOf(sub.endpoint);
		expect(rows).toHaveLength(1);
		// The first person's name for the device does not follow it.
		expect(rows[0]).toMatchObject({ userId: second.user.id, label: '' });
		expect(await listed(first)).toEqual([]);
		expect((await listed(second)).map((d) => d.endpoint)).toEqual([sub.endpoint]);
	});

	it('deletes only the caller’s own subscription', async () => {
		const owner = await person('push-own');
		const other = await person('push-other');
		const sub = browserSubscription();
		await post(owner, sub);

		const refused = await remove(other, { endpoint: sub.endpoint });
		expect(refused.status).toBe(404);
		expect(await rowsOf(sub.endpoint)).toHaveLength(1);

		const removed = await remove(owner, { endpoint: sub.endpoint });
		expect(removed.status).toBe(200);
		expect(await rowsOf(sub.endpoint)).toHaveLength(0);
		expect((await remove(owner, { endpoint: sub.endpoint })).status).toBe(404);
	});

	it('refuses bad subscriptions with 400 in words and writes nothing', async () => {
		const me = await person('push-invalid');
		const sub = browserSubscription();
		const point = Buffer.from(sub.keys.p256dh, 'base64url');
		const notOnCurve = Buffer.concat([point.subarray(0, 64), Buffer.from([point[64] ^ 1])]).toString('base64url');
		const compressed = Buffer.concat([Buffer.from([2]), point.subarray(1, 33), Buffer.alloc(32)]).toString('base64url');
		const cases: [string, unknown, RegExp][] = [
			// '+' and '/': standard base64's letters, which base64url spells '-' and '_'.
			['standard base64 instead of base64url', { ...sub, keys: { ...sub.keys, p256dh: `B+/${sub.keys.p256dh.slice(3)}` } }, /base64url/],
			['a p256dh key one byte short', { ...sub, keys: { ...sub.keys, p256dh: point.subarray(1).toString('base64url') } }, /65 bytes/],
			['an auth secret of 17 bytes', { ...sub, keys: { ...sub.keys, auth: randomBytes(17).toString('base64url') } }, /16 bytes/],
			['a p256dh key that is not an uncompressed point', { ...sub, keys: { ...sub.keys, p256dh: compressed } }, /uncompressed/],
			['a p256dh key off the curve', { ...sub, keys: { ...sub.keys, p256dh: notOnCurve } }, /P-256/],
			['an http endpoint', { ...sub, endpoint: sub.endpoint.replace('https:', 'http:') }, /https/],
			['an endpoint that is not a URL', { ...sub, endpoint: 'push me' }, /https/],
			['an endpoint with a password', { ...sub, endpoint: sub.endpoint.replace('https://', 'https://me:secret@') }, /https/],
			['an endpoint of 2001 characters', { ...sub, endpoint: `${sub.endpoint}/${'a'.repeat(2000 - sub.endpoint.length)}` }, /2000/],
			['an endpoint on the workshop network', { ...sub, endpoint: 'https://192.168.1.20/push/abc' }, /push service/],
			['an endpoint at a .local name', { ...sub, endpoint: 'https://bench.local/push/abc' }, /push service/],
			['a label with a control character', { ...sub, label: 'Phone\u0007' }, /control characters/],
			['a label of 81 characters', { ...sub, label: 'x'.repeat(81) }, /80 characters/],
			['no keys', { endpoint: sub.endpoint }, /keys/]
		];
		for (const [what, body, words] of cases) {
			const answer = await post(me, body);
			expect(answer.status, what).toBe(400);
			const problem = (await answer.json()) as { message: string; errors?: { message: string }[] };
			const text = [problem.message, ...(problem.errors ?? []).map((e) => e.message)].join(' ');
			expect(text, what).toMatch(words);
		}
		expect(await countOf(me)).toBe(0);
		// The same subscription, well formed, is taken: the cases failed for what they changed.
		expect((await post(me, sub)).status).toBe(201);
	});

	it('answers 415 unless the body is JSON, and 401 signed out', async () => {
		const me = await person('push-415');
		const sub = browserSubscription();
		for (const type of ['text/plain', 'application/x-www-form-urlencoded', null]) {
			const url = new URL(`http://127.0.0.1${PATH}`);
			const event = {
				locals: { user: me.user, session: null },
				params: {},
				url,
				request: new Request(url, { method: 'POST', body: JSON.stringify(sub), headers: type ? { 'content-type': type } : {} })
			} as unknown as Event;
			expect((await pushApi.POST(event)).status, String(type)).toBe(415);
		}
		expect(await rowsOf(sub.endpoint)).toHaveLength(0);

		await expect(post(null, sub)).rejects.toMatchObject({ status: 401 });
		await expect(remove(null, { endpoint: sub.endpoint })).rejects.toMatchObject({ status: 401 });
		await expect(pushApi.GET(apiEvent<Event>(null, PATH, {}))).rejects.toMatchObject({ status: 401 });
		await expect(keyApi.GET(apiEvent<Parameters<typeof keyApi.GET>[0]>(null, `${PATH}/key`, {}))).rejects.toMatchObject({ status: 401 });
		expect(await rowsOf(sub.endpoint)).toHaveLength(0);
	});

	it('gives a signed-in person the VAPID public key, an uncompressed P-256 point', async () => {
		const me = await person('push-key');
		const answer = await keyApi.GET(apiEvent<Parameters<typeof keyApi.GET>[0]>(me, `${PATH}/key`, {}));
		expect(answer.status).toBe(200);
		const { publicKey } = (await answer.json()) as { publicKey: string };
		const point = Buffer.from(publicKey, 'base64url');
		expect(point.length).toBe(65);
		expect(point[0]).toBe(4);
	});

	it(`keeps at most ${MAX_PUSH_DEVICES} devices per person, also when the last places are taken at once`, async () => {
		const me = await person('push-limit');
		const subs = Array.from({ length: MAX_PUSH_DEVICES - 4 }, browserSubscription);
		for (const sub of subs) expect((await post(me, sub)).status).toBe(201);

		// Twelve new devices at once for the last four places: four get one, the others are told why not.
		const racing = await Promise.all(Array.from({ length: 12 }, () => post(me, browserSubscription())));
		expect(racing.filter((a) => a.status === 201)).toHaveLength(4);
		expect(racing.filter((a) => a.status === 409)).toHaveLength(8);
		const refused = racing.find((a) => a.status === 409)!;
		expect(((await refused.json()) as { message: string }).message).toMatch(/Stop alerts on a device you no longer use/);
		expect(await countOf(me)).toBe(MAX_PUSH_DEVICES);

		// A device already kept can still renew its keys at the limit.
		expect((await post(me, { endpoint: subs[0].endpoint, keys: browserSubscription().keys })).status).toBe(200);
		// And one taken over from another person counts as new.
		const other = await person('push-limit-other');
		const theirs = browserSubscription();
		await post(other, theirs);
		expect((await post(me, theirs)).status).toBe(409);
		expect((await rowsOf(theirs.endpoint))[0].userId).toBe(other.user.id);
	});
});

/**
 * The devices a person gets push alerts on: one row per browser push subscription, found by its
 * endpoint. A subscription belongs to a person, not to a workshop (the person's own choices per
 * workshop decide which alerts go out). An endpoint is one browser profile on one device: when a
 * second person registers it, the device changed hands and the row moves to them.
 */
import { createPublicKey } from 'node:crypto';
import { and, asc, count, eq } from 'drizzle-orm';
import { MAX_PUSH_DEVICES, type PushSubscriptionInput } from '$lib/schemas/push';
import { db } from './db';
import { pushSubscriptions, users } from './db/schema';
import { fakesEnabled } from './fakes';
import { newId } from './ids';

export type PushDeviceView = {
	id: string;
	endpoint: string;
	label: string;
	createdAt: string;
	lastSuccessAt: string | null;
};

type Result<T> = ({ ok: true } & T) | { ok: false; status: 400 | 409; message: string };

const view = (row: typeof pushSubscriptions.$inferSelect): PushDeviceView => ({
	id: row.id,
	endpoint: row.endpoint,
	label: row.label,
	createdAt: row.createdAt.toISOString(),
	lastSuccessAt: row.lastSuccessAt?.toISOString() ?? null
});

const loopbackHost = (host: string) => host === 'localhost' || host === '[::1]' || /^127\.\d{1,3}\.\d{1,3}\.\d{1,3}$/.test(host);

/**
 * Why the server will not post to this endpoint, or null. Push services are public hosts with
 * names; an address on this machine or the workshop's network (an IP literal, `localhost`,
 * `.local`, a single-label name) would let anyone signed in make the server post to it. With the
 * local fakes on, the fake push service on loopback is allowed.
 */
export function endpointProblem(endpoint: string, fakes = fakesEnabled()): string | null {
	const host = new URL(endpoint).hostname.toLowerCase();
	if (fakes && loopbackHost(host)) return null;
	const ipLiteral = host.startsWith('[') || /^[\d.]+$/.test(host);
	const privateName = !host.includes('.') || /\.(localhost|local|internal|lan|home\.arpa)$/.test(host);
	if (ipLiteral || privateName || loopbackHost(host)) {
		return "This endpoint is not a push service's address (it points at a machine on this network). Subscribe again from the browser.";
	}
	return null;
}

/** True when the p256dh key (65 bytes, checked by the schema) is a point on P-256: web-push cannot encrypt to anything else. */
function onCurve(p256dh: string): boolean {
	const point = Buffer.from(p256dh, 'base64url');
	try {
		createPublicKey({
			key: { kty: 'EC', crv: 'P-256', x: point.subarray(1, 33).toString('base64url'), y: point.subarray(33, 65).toString('base64url') },
			format: 'jwk'
		});
		return true;
	} catch {
		return false;
	}
}

/** The person's devices, oldest first. */
export async function listPushDevices(userId: string): Promise<PushDeviceView[]> {
	const rows = await db.select().from(pushSubscriptions).where(eq(pushSubscriptions.userId, userId)).orderBy(asc(pushSubscriptions.createdAt));
	return rows.map(view);
}

/**
 * Saves this device's subscription for the person: new keys for an endpoint they already have,
 * a new row, or the row of another person's endpoint moved to them. One transaction that first
 * locks the person's row, so two posts at once cannot pass the device limit together.
 */
export async function savePushDevice(
	userId: string,
	input: PushSubscriptionInput
): Promise<Result<{ device: PushDeviceView; created: boolean; moved: boolean }>> {
	const problem = endpointProblem(input.endpoint);
	if (problem) return { ok: false, status: 400, message: problem };
	if (!onCurve(input.keys.p256dh)) {
		return { ok: false, status: 400, message: 'The p256dh key is not a P-256 public key. Subscribe again from the browser.' };
	}
	return db.transaction(async (tx) => {
		await tx.select({ id: users.id }).from(users).where(eq(users.id, userId)).for('update');
		const [existing] = await tx.select().from(pushSubscriptions).where(eq(pushSubscriptions.endpoint, input.endpoint)).for('update');
		const mine = existing?.userId === userId;
		if (!mine) {
			const [{ n }] = await tx.select({ n: count() }).from(pushSubscriptions).where(eq(pushSubscriptions.userId, userId));
			if (n >= MAX_PUSH_DEVICES) {
				return {
					ok: false as const,
					status: 409 as const,
					message: `Alerts already go to ${MAX_PUSH_DEVICES} devices of yours, the most Cellsitter keeps. Stop alerts on a device you no longer use, then try again.`
				};
			}
		}
		const keys = { p256dh: input.keys.p256dh, auth: input.keys.auth };
		// A moved or new endpoint starts over: the earlier owner's label and delivery record are not this person's.
		const set = mine
			? { ...keys, label: input.label ?? existing.label }
			: { ...keys, userId, label: input.label ?? '', createdAt: new Date(), lastSuccessAt: null };
		const [row] = await tx
			.insert(pushSubscriptions)
			.values({ id: newId(), userId, endpoint: input.endpoint, ...keys, label: input.label ?? '' })
			.onConflictDoUpdate({ target: pushSubscriptions.endpoint, set })
			.returning();
		return { ok: true as const, device: view(row), created: !existing, moved: Boolean(existing) && !mine };
	});
}

/** Removes the person's own subscription of this endpoint; false when they have none. */
export async function removePushDevice(userId: string, endpoint: string): Promise<boolean> {
	const removed = await db
		.delete(pushSubscriptions)
		.where(and(eq(pushSubscriptions.userId, userId), eq(pushSubscriptions.endpoint, endpoint)))
		.returning({ id: pushSubscriptions.id });
	return removed.length > 0;
}

/**
 * Device tokens: a data logger's key to one session. The token is 32 random bytes shown once;
 * only its SHA-256 is kept. A fast hash on purpose — the token is random, not a password, so a
 * slow hash would buy nothing and the readings API must answer hundreds of posts a second.
 */
import { createHash, randomBytes } from 'node:crypto';
import { and, desc, eq, sql } from 'drizzle-orm';
import { requirePermission, type Member } from '../auth/permissions';
import { db } from '../db';
import { chargeSessions, deviceTokens, packs, users, workshops } from '../db/schema';
import { newId } from '../ids';
import { writeAudit } from './audit';
import type { DeviceActor } from './readings';

/** Tokens start with this, so a leaked one is recognisable (in a log, a repository). */
export const DEVICE_TOKEN_PREFIX = 'csd_';

/** SHA-256, hex, of the whole token as sent. */
export function hashDeviceToken(token: string): string {
	return createHash('sha256').update(token, 'utf8').digest('hex');
}

export type DeviceTokenView = {
	id: string;
	name: string;
	createdAt: string;
	createdBy: string | null;
	lastUsedAt: string | null;
	revokedAt: string | null;
};

type TokenResult<T> = ({ ok: true } & T) | { ok: false; status: 404 | 409; message: string };

async function sessionOf(member: Member, sessionId: string) {
	const [row] = await db
		.select({ id: chargeSessions.id, packId: chargeSessions.packId, status: chargeSessions.status })
		.from(chargeSessions)
		.where(and(eq(chargeSessions.id, sessionId), eq(chargeSessions.workshopId, member.workshop.id)));
	return row ?? null;
}

/**
 * Issues a token for the session (owner, builder). The answer holds the token itself, which is
 * never stored nor shown again.
 */
export async function issueDeviceToken(
	member: Member,
	sessionId: string,
	name: string
): Promise<TokenResult<{ token: string; device: DeviceTokenView }>> {
	requirePermission(member, 'plans.edit');
	const session = await sessionOf(member, sessionId);
	if (!session) return { ok: false, status: 404, message: 'Not found' };
	if (session.status === 'done' || session.status === 'stopped')
		return { ok: false, status: 409, message: 'This session has ended; a device cannot post to it. Issue the token for the next session.' };
	const token = DEVICE_TOKEN_PREFIX + randomBytes(32).toString('base64url');
	const id = newId();
	const createdAt = await db.transaction(async (tx) => {
		const [row] = await tx
			.insert(deviceTokens)
			.values({ id, sessionId, name, tokenHash: hashDeviceToken(token), createdBy: member.user.id })
			.returning({ createdAt: deviceTokens.createdAt });
		await writeAudit(tx, {
			workshopId: member.workshop.id,
			actorId: member.user.id,
			actorLabel: member.user.name,
			kind: 'device-token.issue',
			packId: session.packId,
			sessionId,
			subjectType: 'device-token',
			subjectId: id,
			after: { name }
		});
		return row.createdAt;
	});
	return {
		ok: true,
		token,
		device: { id, name, createdAt: createdAt.toISOString(), createdBy: member.user.name, lastUsedAt: null, revokedAt: null }
	};
}

/** Revokes a token of the session (owner, builder); revoking it again changes nothing. */
export async function revokeDeviceToken(member: Member, sessionId: string, tokenId: string): Promise<TokenResult<{ device: DeviceTokenView }>> {
	requirePermission(member, 'plans.edit');
	const session = await sessionOf(member, sessionId);
	if (!session) return { ok: false, status: 404, message: 'Not found' };
	return db.transaction(async (tx) => {
		const [row] = await tx
			.select()
			.from(deviceTokens)
			.where(and(eq(deviceTokens.id, tokenId), eq(deviceTokens.sessionId, sessionId)))
			.for('update');
		if (!row) return { ok: false as const, status: 404 as const, message: 'No such device token in this session.' };
		let revokedAt = row.revokedAt;
		if (!revokedAt) {
			revokedAt = new Date();
			await tx.update(deviceTokens).set({ revokedAt }).where(eq(deviceTokens.id, tokenId));
			await writeAudit(tx, {
				workshopId: member.workshop.id,
				actorId: member.user.id,
				actorLabel: member.user.name,
				kind: 'device-token.revoke',
				packId: session.packId,
				sessionId,
				subjectType: 'device-token',
				subjectId: tokenId,
				before: { revokedAt: null },
				after: { revokedAt: revokedAt.toISOString() }
			});
		}
		return {
			ok: true as const,
			device: {
				id: row.id,
				name: row.name,
				createdAt: row.createdAt.toISOString(),
				createdBy: null,
				lastUsedAt: row.lastUsedAt?.toISOString() ?? null,
				revokedAt: revokedAt.toISOString()
			}
		};
	});
}

/** The session's tokens, newest first (never the token itself). null: no such session here. */
export async function listDeviceTokens(member: Member, sessionId: string): Promise<DeviceTokenView[] | null> {
	requirePermission(member, 'plans.edit');
	if (!(await sessionOf(member, sessionId))) return null;
	const rows = await db
		.select({
			id: deviceTokens.id,
			name: deviceTokens.name,
			createdAt: deviceTokens.createdAt,
			createdBy: users.name,
			lastUsedAt: deviceTokens.lastUsedAt,
			revokedAt: deviceTokens.revokedAt
		})
		.from(deviceTokens)
		.leftJoin(users, eq(users.id, deviceTokens.createdBy))
		.where(eq(deviceTokens.sessionId, sessionId))
		.orderBy(desc(deviceTokens.createdAt));
	return rows.map((r) => ({
		id: r.id,
		name: r.name,
		createdAt: r.createdAt.toISOString(),
		createdBy: r.createdBy,
		lastUsedAt: r.lastUsedAt?.toISOString() ?? null,
		revokedAt: r.revokedAt?.toISOString() ?? null
	}));
}

/** True when the request carries an `Authorization: Bearer …` header (then cookies do not count). */
export function hasBearer(request: Request): boolean {
	return /^bearer\s/i.test(request.headers.get('authorization') ?? '');
}

const bearerChallenge = (error: string, message: string) =>
	new Response(JSON.stringify({ message }), {
		status: 401,
		headers: {
			'content-type': 'application/json',
			'www-authenticate': `Bearer realm="cellsitter", error="${error}"`
		}
	});

/**
 * The token lookup of every device post, as a prepared statement (PostgreSQL plans it once per
 * connection; drizzle would send it unnamed and have it planned on every post). Made on first use.
 */
let tokenByHash: ReturnType<typeof prepareTokenByHash> | undefined;
function prepareTokenByHash() {
	return db
		.select({
			id: deviceTokens.id,
			name: deviceTokens.name,
			sessionId: deviceTokens.sessionId,
			revokedAt: deviceTokens.revokedAt,
			lastUsedAt: deviceTokens.lastUsedAt,
			workshopId: chargeSessions.workshopId,
			packId: chargeSessions.packId,
			slug: workshops.slug,
			series: packs.series
		})
		.from(deviceTokens)
		.innerJoin(chargeSessions, eq(chargeSessions.id, deviceTokens.sessionId))
		.innerJoin(workshops, eq(workshops.id, chargeSessions.workshopId))
		.innerJoin(packs, eq(packs.id, chargeSessions.packId))
		.where(eq(deviceTokens.tokenHash, sql.placeholder('hash')))
		.prepare('device_token_by_hash');
}

/**
 * The device behind `Authorization: Bearer <token>` for this workshop and session, in one query
 * (token, its session, the workshop's slug and the pack's series). An unknown or revoked token →
 * 401 with a Bearer challenge; a token of another session or workshop → 403; nothing is written.
 */
export async function deviceFromBearer(request: Request, workshopSlug: string, sessionId: string): Promise<DeviceActor | Response> {
	const match = /^bearer\s+(\S+)\s*$/i.exec(request.headers.get('authorization') ?? '');
	if (!match || match[1].length > 200)
		return bearerChallenge('invalid_request', 'Send the device token as: Authorization: Bearer <token>.');
	tokenByHash ??= prepareTokenByHash();
	const [row] = await tokenByHash.execute({ hash: hashDeviceToken(match[1]) });
	if (!row) return bearerChallenge('invalid_token', 'This device token is not known. Ask the builder for a token of this session.');
	if (row.revokedAt)
		return bearerChallenge('invalid_token', 'This device token was revoked. Ask the builder for a new token of this session.');
	if (row.sessionId !== sessionId || row.slug !== workshopSlug)
		return new Response(
			JSON.stringify({ message: 'This device token belongs to another session. Post to the session it was issued for, or ask for a token of this one.' }),
			{ status: 403, headers: { 'content-type': 'application/json' } }
		);
	return {
		kind: 'device',
		tokenId: row.id,
		sessionId: row.sessionId,
		workshopId: row.workshopId,
		name: row.name,
		packId: row.packId,
		series: row.series,
		lastUsedAt: row.lastUsedAt
	};
}


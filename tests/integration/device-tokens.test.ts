import { createHash } from 'node:crypto';
import { and, eq } from 'drizzle-orm';
import { describe, expect, it } from 'vitest';
import { db } from '$lib/server/db';
import { auditEvents, chargeSessions, deviceTokens, readings } from '$lib/server/db/schema';
import * as readingsApi from '../../src/routes/api/w/[workshop=slug]/sessions/[sessionId=id]/readings/+server';
import * as tokensApi from '../../src/routes/api/w/[workshop=slug]/sessions/[sessionId=id]/tokens/+server';
import * as tokenApi from '../../src/routes/api/w/[workshop=slug]/sessions/[sessionId=id]/tokens/[tokenId=id]/+server';
import { apiEvent, joinAs } from './helpers';
import { addSession, sessionFixture } from './readings-fixture';

type PostEvent = Parameters<typeof readingsApi.POST>[0];
type Issued = { token: string; device: { id: string; name: string } };

/** A logger's post: Bearer token, JSON body, no cookie (or a member's locals, to show they are ignored). */
function devicePost(ws: string, sessionId: string, token: string, body: unknown, locals: PostEvent['locals'] = { user: null, session: null }) {
	const url = new URL(`http://127.0.0.1/api/w/${ws}/sessions/${sessionId}/readings`);
	return readingsApi.POST({
		locals,
		params: { workshop: ws, sessionId },
		url,
		request: new Request(url, {
			method: 'POST',
			body: JSON.stringify(body),
			headers: { 'content-type': 'application/json', authorization: `Bearer ${token}` }
		})
	} as unknown as PostEvent);
}

const reading = (clientId: string, groupIndex: number | null = 1) => ({
	readings: [{ clientId, groupIndex, takenAt: new Date(Date.now() - 60_000).toISOString(), volts: groupIndex === null ? 14.8 : 3.7, tempC: 23 }]
});

describe('device tokens', () => {
	it('issues a token shown once and stored as its SHA-256; the device posts with it; revoked → 401', async () => {
		const { owner, session, ws } = await sessionFixture();
		const params = { workshop: ws, sessionId: session.id };
		const base = `/api/w/${ws}/sessions/${session.id}/tokens`;
		const issued = await tokensApi.POST(apiEvent(owner, base, params, { method: 'POST', body: { name: 'Bench logger' } }));
		expect(issued.status).toBe(201);
		const { token, device } = (await issued.json()) as Issued;
		// 32 random bytes in base64url are 43 characters after the prefix.
		expect(token).toMatch(/^csd_[A-Za-z0-9_-]{43}$/);
		const [row] = await db.select().from(deviceTokens).where(eq(deviceTokens.id, device.id));
		expect(row.tokenHash).toBe(createHash('sha256').update(token).digest('hex'));
		expect(JSON.stringify(row)).not.toContain(token.slice(4));

		const listed = await tokensApi.GET(apiEvent(owner, base, params));
		const { devices } = (await listed.json()) as { devices: Record<string, unknown>[] };
		expect(devices).toHaveLength(1);
		expect(JSON.stringify(devices)).not.toContain(token.slice(4));

		const posted = await devicePost(ws, session.id, token, reading('logger-1'));
		expect(posted.status).toBe(201);
		const [stored] = await db.select().from(readings).where(eq(readings.sessionId, session.id));
		expect(stored).toMatchObject({ source: 'device', deviceTokenId: device.id, enteredBy: null });
		const [used] = await db.select().from(deviceTokens).where(eq(deviceTokens.id, device.id));
		expect(used.lastUsedAt).not.toBeNull();

		const revoked = await tokenApi.DELETE(apiEvent(owner, `${base}/${device.id}`, { ...params, tokenId: device.id }, { method: 'DELETE' }));
		expect(revoked.status).toBe(200);
		const refused = await devicePost(ws, session.id, token, reading('logger-2'));
		expect(refused.status).toBe(401);
		expect(refused.headers.get('www-authenticate')).toMatch(/^Bearer /);
		expect(((await refused.json()) as { message: string }).message).toMatch(/revoked/);

		const unknown = await devicePost(ws, session.id, 'csd_' + 'x'.repeat(43), reading('logger-3'));
		expect(unknown.status).toBe(401);
		expect(unknown.headers.get('www-authenticate')).toMatch(/^Bearer /);

		expect((await db.select().from(readings).where(eq(readings.sessionId, session.id))).length).toBe(1);
		const trail = await db
			.select({ kind: auditEvents.kind })
			.from(auditEvents)
			.where(and(eq(auditEvents.subjectType, 'device-token'), eq(auditEvents.subjectId, device.id)));
		expect(trail.map((t) => t.kind).sort()).toEqual(['device-token.issue', 'device-token.revoke']);
	});

	it('cannot write with a token of another session or another workshop', async () => {
		const a = await sessionFixture();
		const b = await sessionFixture();
		const sibling = await addSession(a.owner, a.pack.id);
		const issue = async (fx: typeof a) => {
			const answer = await tokensApi.POST(
				apiEvent(fx.owner, '/x', { workshop: fx.ws, sessionId: fx.session.id }, { method: 'POST', body: { name: 'Logger' } })
			);
			return ((await answer.json()) as Issued).token;
		};
		const tokenA = await issue(a);
		const tokenB = await issue(b);

		// Another session of the same workshop and pack.
		const otherSession = await devicePost(a.ws, sibling.id, tokenA, reading('x-1'));
		expect(otherSession.status).toBe(403);
		// Another workshop: B's token sent to A's session, and A's token under B's slug.
		expect((await devicePost(a.ws, a.session.id, tokenB, reading('x-2'))).status).toBe(403);
		expect((await devicePost(b.ws, a.session.id, tokenA, reading('x-3'))).status).toBe(403);
		for (const id of [a.session.id, b.session.id, sibling.id])
			expect(await db.select().from(readings).where(eq(readings.sessionId, id))).toHaveLength(0);
	});

	it('ignores the cookie when a Bearer header is sent, and only the builder or owner issues tokens', async () => {
		const { owner, session, ws } = await sessionFixture();
		const params = { workshop: ws, sessionId: session.id };
		// A signed-in owner with a wrong token is still refused: the token decides.
		const withCookie = await devicePost(ws, session.id, 'csd_wrong', reading('c-1'), { user: owner.user, session: null } as PostEvent['locals']);
		expect(withCookie.status).toBe(401);

		const tech = await joinAs(owner, 'technician');
		await expect(tokensApi.POST(apiEvent(tech, '/x', params, { method: 'POST', body: { name: 'Mine' } }))).rejects.toMatchObject({ status: 403 });
		const builder = await joinAs(owner, 'builder');
		const issued = await tokensApi.POST(apiEvent(builder, '/x', params, { method: 'POST', body: { name: 'Builder logger' } }));
		expect(issued.status).toBe(201);
		const noName = await tokensApi.POST(apiEvent(builder, '/x', params, { method: 'POST', body: { name: ' \u0000' } }));
		expect(noName.status).toBe(400);

		// A device may not post to a session that has ended.
		const { token } = (await issued.json()) as Issued;
		await db.update(chargeSessions).set({ status: 'done' }).where(eq(chargeSessions.id, session.id));
		const ended = await devicePost(ws, session.id, token, reading('d-1'));
		expect(ended.status).toBe(409);
	});
});

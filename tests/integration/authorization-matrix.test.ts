/**
 * The authorization matrix: every route of the tree (route-tree.ts reads src/routes, so a new
 * route cannot be missed) called as each actor, against a table of expected outcomes written out
 * by hand below — never derived from the permission module under test. Handlers are called
 * in-process with a constructed request event and real data in PostgreSQL.
 *
 * Outcomes, as the table writes them:
 *   ok     the request got past access: 2xx, a redirect anywhere but /login, or a 4xx about the
 *          body or the record's state (400, 409, 410, 413, 415, 422, 429)
 *   login  a redirect to /login (the pages' answer to a signed-out visitor)
 *   401    the API's answer to a request without a session (or with a device token it refuses)
 *   403    refused for the role (or the device token's session)
 *   404    hidden: the record, or the workshop, is not there for this actor
 * Anything else (a 5xx, an unexpected throw) never matches a cell.
 */
import { randomUUID } from 'node:crypto';
import { rm } from 'node:fs/promises';
import { isActionFailure, isHttpError, isRedirect } from '@sveltejs/kit';
import { stringify } from 'devalue';
import { and, eq, inArray } from 'drizzle-orm';
import sharp from 'sharp';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { chemistries } from '$lib/engine';
import { formValuesOf } from '$lib/chemistry-form';
import type { Member } from '$lib/server/auth/permissions';
import { addAttachment } from '$lib/server/attachments';
import { addCells, listBatch } from '$lib/server/cells';
import { createCharger } from '$lib/server/chargers';
import { createChemistryProfile } from '$lib/server/chemistry-profiles';
import { db } from '$lib/server/db';
import { alerts, auditEvents, chargeSessions, invitations, memberships, packs, sessionWatchers, users } from '$lib/server/db/schema';
import { rereadServerEnv } from '$lib/server/env';
import { newId } from '$lib/server/ids';
import { readingInputSchema } from '$lib/schemas/readings';
import { logReadings } from '$lib/server/sessions/readings';
import { saveLoggerMapping } from '$lib/server/sessions/logger';
import { issueDeviceToken } from '$lib/server/sessions/tokens';
import { inviteMember } from '$lib/server/workshops-invitations';
import { joinAs, memberOf, signUpOwner, uniqueEmail } from './helpers';
import { addSession, sessionFixture } from './readings-fixture';
import { fillPattern, paramNames, routeTree, type RouteEntry } from './route-tree';

// Attachments (and push keys) go to a scratch folder of this run, never the project's data folder;
// an OAuth provider is configured (never contacted: no request here gets as far as its server).
const scratchEnv: Record<string, string> = {
	CELLSITTER_DATA_DIR: `${process.env.TMPDIR ?? '/tmp'}/cellsitter-matrix-${process.pid}-${Date.now()}`,
	OAUTH_NAME: 'Matrix provider',
	OAUTH_CLIENT_ID: 'matrix-client',
	OAUTH_CLIENT_SECRET: 'matrix-secret',
	OAUTH_AUTHORIZE_URL: 'http://127.0.0.1:9/authorize',
	OAUTH_TOKEN_URL: 'http://127.0.0.1:9/token',
	OAUTH_USERINFO_URL: 'http://127.0.0.1:9/userinfo'
};
const savedEnv = Object.fromEntries(Object.keys(scratchEnv).map((k) => [k, process.env[k]]));

const actors = ['owner', 'builder', 'technician', 'viewer', 'packViewer', 'other', 'otherIds', 'signedOut', 'device'] as const;
type Actor = (typeof actors)[number];
type Outcome = 'ok' | 'login' | '401' | '403' | '404';

/*
 * The actors (columns, in this order):
 *   owner, builder, technician, viewer   members of workshop A; the viewer owns no pack
 *   packViewer   a viewer of workshop A who is the pack owner of the pack in the URLs
 *   other        a member (owner) of workshop B, at workshop A's URLs
 *   otherIds     the same person at workshop B's URLs, with workshop A's record ids in them
 *   signedOut    no session
 *   device       no session, `Authorization: Bearer` with the device token of another session of A
 *
 * Rows: "<file under src/routes> <method | load | action:name>".
 */
const A = 'ok ok ok ok ok 404 ok login login'; // any member of the workshop
const PAGE_OWN = 'ok ok ok 404 ok 404 404 login login'; // staff, and the pack's own viewer
const PAGE_STAFF = 'ok ok ok 403 403 404 ok login login'; // staff only, nothing of A in the URL but the slug
const PAGE_BUILD = 'ok ok 403 403 403 404 ok login login'; // owner and builder, no record in the URL
const PAGE_BUILD_ID = 'ok ok 403 403 403 404 404 login login'; // owner and builder, a record of A in the URL
const PAGE_HANDS_ID = 'ok ok ok 403 403 404 404 login login'; // staff who run sessions and measure
const PAGE_OWNER = 'ok 403 403 403 403 404 ok login login'; // workshop owners
const ACCOUNT = 'ok ok ok ok ok ok ok login login'; // any signed-in person
const PUBLIC = 'ok ok ok ok ok ok ok ok ok';
const API_A = 'ok ok ok ok ok 404 ok 401 401';
const API_OWN = 'ok ok ok 404 ok 404 404 401 401';
const API_STAFF = 'ok ok ok 403 403 404 ok 401 401';
const API_BUILD = 'ok ok 403 403 403 404 ok 401 401';
const API_BUILD_ID = 'ok ok 403 403 403 404 404 401 401';
const API_HANDS_ID = 'ok ok ok 403 403 404 404 401 401';
const API_PERSON = 'ok ok ok ok ok ok ok 401 401';

const w = '(app)/w/[workshop=slug]';
const api = 'api/w/[workshop=slug]';

const expected: Record<string, string> = {
	'(app)/account/+page.server.ts load': ACCOUNT,
	'(app)/account/+page.server.ts action:createWorkshop': ACCOUNT,
	'(app)/account/+page.server.ts action:unlink': ACCOUNT,

	[`${w}/+layout.server.ts load`]: A,
	// A redirect to the packs page built from the URL alone; the layout and that page check.
	[`${w}/+page.server.ts load`]: PUBLIC,
	[`${w}/alerts/+page.server.ts load`]: A,
	[`${w}/alerts/[alertId=id]/+page.server.ts load`]: PAGE_OWN,
	[`${w}/alerts/[alertId=id]/+page.server.ts action:acknowledge`]: PAGE_HANDS_ID,
	// ?session=<a session of A>: a viewer who does not own its pack is told nothing of it.
	[`${w}/alerts/alerts.csv/+server.ts GET`]: PAGE_OWN,
	[`${w}/alerts/settings/+page.server.ts load`]: A,
	[`${w}/alerts/settings/+page.server.ts action:save`]: A,
	[`${w}/cell-specs/+page.server.ts load`]: PAGE_STAFF,
	[`${w}/cell-specs/[specId=id]/+page.server.ts load`]: PAGE_BUILD_ID,
	[`${w}/cell-specs/[specId=id]/+page.server.ts action:default`]: PAGE_BUILD_ID,
	[`${w}/cell-specs/new/+page.server.ts load`]: PAGE_BUILD,
	[`${w}/cell-specs/new/+page.server.ts action:default`]: PAGE_BUILD,
	[`${w}/chargers/+page.server.ts load`]: PAGE_STAFF,
	[`${w}/chargers/[chargerId=id]/+page.server.ts load`]: PAGE_BUILD_ID,
	[`${w}/chargers/[chargerId=id]/+page.server.ts action:save`]: PAGE_BUILD_ID,
	[`${w}/chargers/[chargerId=id]/+page.server.ts action:delete`]: PAGE_BUILD_ID,
	[`${w}/chargers/new/+page.server.ts load`]: PAGE_BUILD,
	[`${w}/chargers/new/+page.server.ts action:default`]: PAGE_BUILD,
	[`${w}/chemistries/+page.server.ts load`]: PAGE_STAFF,
	[`${w}/chemistries/[profileId=id]/+page.server.ts load`]: PAGE_BUILD_ID,
	[`${w}/chemistries/[profileId=id]/+page.server.ts action:save`]: PAGE_BUILD_ID,
	[`${w}/chemistries/[profileId=id]/+page.server.ts action:delete`]: PAGE_BUILD_ID,
	[`${w}/chemistries/new/+page.server.ts load`]: PAGE_BUILD,
	[`${w}/chemistries/new/+page.server.ts action:default`]: PAGE_BUILD,
	[`${w}/packs/+page.server.ts load`]: A,
	[`${w}/packs/[packId=id]/+page.server.ts load`]: PAGE_OWN,
	[`${w}/packs/[packId=id]/attachments/+server.ts GET`]: PAGE_OWN,
	[`${w}/packs/[packId=id]/attachments/+server.ts POST`]: PAGE_HANDS_ID,
	[`${w}/packs/[packId=id]/attachments/[attachmentId=id]/+server.ts GET`]: PAGE_OWN,
	// The file was attached by the owner: a technician may remove only what they attached.
	[`${w}/packs/[packId=id]/attachments/[attachmentId=id]/+server.ts DELETE`]: 'ok ok 403 403 403 404 404 login login',
	[`${w}/packs/[packId=id]/attachments/[attachmentId=id]/thumb/+server.ts GET`]: PAGE_OWN,
	[`${w}/packs/[packId=id]/cells.csv/+server.ts GET`]: PAGE_OWN,
	[`${w}/packs/[packId=id]/cells/+page.server.ts load`]: PAGE_OWN,
	[`${w}/packs/[packId=id]/cells/+page.server.ts action:addCells`]: PAGE_HANDS_ID,
	[`${w}/packs/[packId=id]/cells/+page.server.ts action:correct`]: PAGE_HANDS_ID,
	[`${w}/packs/[packId=id]/cells/+page.server.ts action:importCsv`]: PAGE_HANDS_ID,
	[`${w}/packs/[packId=id]/cells/+page.server.ts action:remove`]: PAGE_HANDS_ID,
	[`${w}/packs/[packId=id]/edit/+page.server.ts load`]: PAGE_BUILD_ID,
	[`${w}/packs/[packId=id]/edit/+page.server.ts action:default`]: PAGE_BUILD_ID,
	[`${w}/packs/[packId=id]/g/[[group=num]]/+page.server.ts load`]: PAGE_OWN,
	[`${w}/packs/[packId=id]/history/+page.server.ts load`]: PAGE_OWN,
	[`${w}/packs/[packId=id]/labels/+page.server.ts load`]: PAGE_OWN,
	[`${w}/packs/[packId=id]/matching/+page.server.ts load`]: PAGE_BUILD_ID,
	[`${w}/packs/[packId=id]/self-discharge/+page.server.ts load`]: PAGE_OWN,
	[`${w}/packs/[packId=id]/self-discharge/+page.server.ts action:record`]: PAGE_HANDS_ID,
	[`${w}/packs/new/+page.server.ts load`]: PAGE_BUILD,
	[`${w}/packs/new/+page.server.ts action:default`]: PAGE_BUILD,
	[`${w}/sessions/+page.server.ts load`]: A,
	[`${w}/sessions/[sessionId=id]/+page.server.ts load`]: PAGE_OWN,
	[`${w}/sessions/[sessionId=id]/+page.server.ts action:start`]: PAGE_BUILD_ID,
	[`${w}/sessions/[sessionId=id]/+page.server.ts action:startStep`]: PAGE_HANDS_ID,
	[`${w}/sessions/[sessionId=id]/+page.server.ts action:finishStep`]: PAGE_HANDS_ID,
	[`${w}/sessions/[sessionId=id]/+page.server.ts action:pause`]: PAGE_HANDS_ID,
	[`${w}/sessions/[sessionId=id]/+page.server.ts action:resume`]: PAGE_HANDS_ID,
	[`${w}/sessions/[sessionId=id]/+page.server.ts action:stop`]: PAGE_HANDS_ID,
	[`${w}/sessions/[sessionId=id]/+page.server.ts action:takeWatch`]: PAGE_HANDS_ID,
	[`${w}/sessions/[sessionId=id]/devices/+page.server.ts load`]: PAGE_BUILD_ID,
	[`${w}/sessions/[sessionId=id]/devices/+page.server.ts action:issue`]: PAGE_BUILD_ID,
	[`${w}/sessions/[sessionId=id]/devices/+page.server.ts action:revoke`]: PAGE_BUILD_ID,
	[`${w}/sessions/[sessionId=id]/plan/+page.server.ts load`]: PAGE_BUILD_ID,
	[`${w}/sessions/[sessionId=id]/plan/+page.server.ts action:default`]: PAGE_BUILD_ID,
	[`${w}/sessions/[sessionId=id]/readings.csv/+server.ts GET`]: PAGE_OWN,
	[`${w}/sessions/[sessionId=id]/report/+page.server.ts load`]: PAGE_OWN,
	[`${w}/sessions/[sessionId=id]/upload/+page.server.ts load`]: PAGE_HANDS_ID,
	// The column map belongs to the workshop in the URL (B's own for otherIds), not to the session.
	[`${w}/sessions/[sessionId=id]/upload/+page.server.ts action:saveMapping`]: 'ok ok ok 403 403 404 ok login login',
	[`${w}/sessions/[sessionId=id]/upload/+page.server.ts action:importCsv`]: PAGE_HANDS_ID,
	[`${w}/sessions/new/+page.server.ts load`]: PAGE_BUILD,
	[`${w}/sessions/new/+page.server.ts action:default`]: PAGE_BUILD,
	[`${w}/workshop/+page.server.ts load`]: A,
	[`${w}/workshop/+page.server.ts action:rename`]: PAGE_OWNER,
	[`${w}/workshop/+page.server.ts action:escalation`]: PAGE_OWNER,
	[`${w}/workshop/audit/+page.server.ts load`]: PAGE_OWNER,
	[`${w}/workshop/export.zip/+server.ts GET`]: PAGE_OWNER,
	[`${w}/workshop/members/+page.server.ts load`]: PAGE_OWNER,
	[`${w}/workshop/members/+page.server.ts action:invite`]: PAGE_OWNER,
	[`${w}/workshop/members/+page.server.ts action:changeRole`]: PAGE_OWNER,
	[`${w}/workshop/members/+page.server.ts action:remove`]: PAGE_OWNER,
	[`${w}/workshop/members/+page.server.ts action:revoke`]: PAGE_OWNER,

	'(auth)/forgot/+page.server.ts load': PUBLIC,
	'(auth)/forgot/+page.server.ts action:default': PUBLIC,
	'(auth)/invite/[token]/+page.server.ts load': PUBLIC,
	// The invitation is for an address none of the actors has.
	'(auth)/invite/[token]/+page.server.ts action:accept': '403 403 403 403 403 403 403 login login',
	'(auth)/login/+page.server.ts load': PUBLIC,
	'(auth)/login/+page.server.ts action:default': PUBLIC,
	'(auth)/logout/+page.server.ts load': PUBLIC,
	'(auth)/logout/+page.server.ts action:default': 'login login login login login login login login login',
	'(auth)/reset/[token]/+page.server.ts load': PUBLIC,
	'(auth)/reset/[token]/+page.server.ts action:default': PUBLIC,
	'(auth)/signup/+page.server.ts load': PUBLIC,
	'(auth)/signup/+page.server.ts action:default': PUBLIC,
	// No OAuth sign-in under way (no pending cookie): back to the sign-in page with a notice.
	'(auth)/signup/oauth/+page.server.ts load': 'login login login login login login login login login',
	'(auth)/signup/oauth/+page.server.ts action:default': PUBLIC,
	'+layout.server.ts load': PUBLIC,
	'+page.server.ts load': PUBLIC,

	// Only a server started with CELLSITTER_BENCH=1 has it.
	'api/bench/bare/+server.ts POST': '404 404 404 404 404 404 404 404 404',
	'api/push-subscriptions/+server.ts GET': API_PERSON,
	'api/push-subscriptions/+server.ts POST': API_PERSON,
	'api/push-subscriptions/+server.ts DELETE': API_PERSON,
	'api/push-subscriptions/key/+server.ts GET': API_PERSON,
	[`${api}/alert-settings/+server.ts GET`]: API_A,
	[`${api}/alert-settings/+server.ts PATCH`]: API_A,
	[`${api}/alerts/+server.ts GET`]: API_A,
	[`${api}/alerts/[alertId=id]/+server.ts GET`]: API_OWN,
	[`${api}/alerts/[alertId=id]/ack/+server.ts POST`]: API_HANDS_ID,
	[`${api}/chargers/+server.ts GET`]: API_STAFF,
	[`${api}/chargers/+server.ts POST`]: API_BUILD,
	[`${api}/packs/+server.ts GET`]: API_A,
	[`${api}/packs/+server.ts POST`]: API_BUILD,
	[`${api}/packs/[packId=id]/+server.ts GET`]: API_OWN,
	[`${api}/packs/[packId=id]/+server.ts PATCH`]: API_BUILD_ID,
	[`${api}/packs/[packId=id]/cells/+server.ts GET`]: API_OWN,
	[`${api}/packs/[packId=id]/cells/+server.ts POST`]: API_HANDS_ID,
	[`${api}/packs/[packId=id]/matching/+server.ts POST`]: API_BUILD_ID,
	[`${api}/packs/[packId=id]/matching/+server.ts PUT`]: API_BUILD_ID,
	[`${api}/sessions/+server.ts GET`]: API_A,
	[`${api}/sessions/+server.ts POST`]: API_BUILD,
	[`${api}/sessions/[sessionId=id]/+server.ts GET`]: API_OWN,
	[`${api}/sessions/[sessionId=id]/+server.ts PATCH`]: API_BUILD_ID,
	[`${api}/sessions/[sessionId=id]/events/+server.ts GET`]: API_OWN,
	// The one route a device token opens, and only for its own session: another session's → 403.
	[`${api}/sessions/[sessionId=id]/readings/+server.ts POST`]: 'ok ok ok 403 403 404 404 401 403',
	[`${api}/sessions/[sessionId=id]/readings/+server.ts GET`]: API_OWN,
	[`${api}/sessions/[sessionId=id]/readings/[readingId=num]/+server.ts PATCH`]: API_HANDS_ID,
	[`${api}/sessions/[sessionId=id]/series/+server.ts GET`]: API_OWN,
	// { action: 'start' }: starting is for owners and builders, whoever else may run the session.
	[`${api}/sessions/[sessionId=id]/status/+server.ts POST`]: API_BUILD_ID,
	[`${api}/sessions/[sessionId=id]/steps/[stepId=id]/+server.ts POST`]: API_HANDS_ID,
	[`${api}/sessions/[sessionId=id]/tokens/+server.ts GET`]: API_BUILD_ID,
	[`${api}/sessions/[sessionId=id]/tokens/+server.ts POST`]: API_BUILD_ID,
	[`${api}/sessions/[sessionId=id]/tokens/[tokenId=id]/+server.ts DELETE`]: API_BUILD_ID,
	[`${api}/sessions/[sessionId=id]/watch/+server.ts POST`]: API_HANDS_ID,
	[`${api}/sessions/[sessionId=id]/watchers/+server.ts GET`]: API_OWN,
	[`${api}/sessions/[sessionId=id]/watchers/+server.ts POST`]: API_BUILD_ID,

	// The local fakes' mailbox: open to anyone, and only when CELLSITTER_FAKES=1 (the tests run with it).
	'fakes/mailbox/+page.server.ts load': PUBLIC,
	// Starting a sign-in sends anyone on to the provider; coming back without its code and the
	// state cookie goes to the sign-in page with a notice, whoever asks.
	'login/oauth/[provider]/+server.ts GET': PUBLIC,
	'login/oauth/[provider]/callback/+server.ts GET': 'login login login login login login login login login'
};

// ---------------------------------------------------------------------------------------------
// The fixture: workshop A with a member of each role, a pack, a running session and a record of
// every kind the routes name; workshop B with its owner; a device token of a second session of A.

type Ids = Record<string, string>;
let ownerA: Member;
let who: Record<Actor, Member | null>;
let ids: Ids;
let slugB: string;
let deviceToken: string;
let png: Uint8Array;
let cellForEdit: string;
let counter = 0;
const next = () => `${++counter}-${randomUUID().slice(0, 4)}`;

async function freshCharger(): Promise<string> {
	const made = await createCharger(ownerA, {
		name: `Matrix supply ${next()}`,
		kind: 'bench-supply',
		notes: '',
		channels: [{ name: 'Out', maxVolts: 30, maxAmps: 10, maxWatts: null, balanceAmps: null, maxSeriesCells: null }]
	});
	if (!made.ok) throw new Error(made.message);
	return made.charger.id;
}

async function freshProfile(): Promise<string> {
	const made = await createChemistryProfile(ownerA, { name: `Matrix NMC ${next()}`, source: '', ...formValuesOf(chemistries.nmc) });
	if (!made.ok) throw new Error(made.message);
	return made.profile.id;
}

async function freshAttachment(): Promise<string> {
	const made = await addAttachment(ownerA, ids.packId, { name: 'weld.png', bytes: png });
	if (!made.ok) throw new Error(made.message);
	return made.attachment.id;
}

/**
 * What a request of an actor other than workshop A's owner must have left as it was, checked after
 * the matrix: a member of A made for the request (so that an owner's allowed change harms nothing),
 * an invitation of A.
 */
const untouched: { actor: Actor; what: string; holds: () => Promise<boolean> }[] = [];

async function freshMemberOfA(actor: Actor): Promise<string> {
	const id = newId();
	await db.insert(users).values({ id, email: uniqueEmail('bystander'), name: 'Bystander' });
	await db.insert(memberships).values({ workshopId: ownerA.workshop.id, userId: id, role: 'viewer' });
	untouched.push({
		actor,
		what: `member ${id} of workshop A, still a viewer`,
		holds: async () => {
			const [row] = await db
				.select({ role: memberships.role })
				.from(memberships)
				.where(and(eq(memberships.workshopId, ownerA.workshop.id), eq(memberships.userId, id)));
			return row?.role === 'viewer';
		}
	});
	return id;
}

async function freshInvitationOfA(actor: Actor): Promise<string> {
	const email = uniqueEmail('invitee');
	const invited = await inviteMember(ownerA, { email, role: 'technician' });
	if (!invited.ok) throw new Error('invite failed');
	const [row] = await db.select({ id: invitations.id }).from(invitations).where(eq(invitations.email, email));
	untouched.push({
		actor,
		what: `invitation ${row.id} of workshop A, still open`,
		holds: async () => (await db.select().from(invitations).where(eq(invitations.id, row.id))).length === 1
	});
	return row.id;
}

async function freshCell(): Promise<string> {
	const label = `R${next()}`;
	const added = await addCells(ownerA, ids.packId, [{ label, volts: 3.6, resistanceMilliOhms: null, capacityAh: null }]);
	if (!added.ok) throw new Error(added.message);
	const batch = await listBatch(ownerA, ids.packId);
	return batch.cells.find((c) => c.label === label)!.id;
}

beforeAll(async () => {
	Object.assign(process.env, scratchEnv);
	rereadServerEnv();
	png = new Uint8Array(
		await sharp({ create: { width: 32, height: 24, channels: 3, background: { r: 181, g: 98, b: 42 } } }).png().toBuffer()
	);
	const f = await sessionFixture({ series: 2 });
	ownerA = f.owner;
	const [builder, technician, viewer, packViewer, otherOwner] = await Promise.all([
		joinAs(ownerA, 'builder'),
		joinAs(ownerA, 'technician'),
		joinAs(ownerA, 'viewer'),
		joinAs(ownerA, 'viewer'),
		signUpOwner('other').then((o) => memberOf(o.userId, o.workshopSlug))
	]);
	slugB = otherOwner.workshop.slug;
	await db.update(packs).set({ packOwnerId: packViewer.user.id }).where(eq(packs.id, f.pack.id));
	who = {
		owner: ownerA,
		builder,
		technician,
		viewer,
		packViewer,
		other: otherOwner,
		otherIds: otherOwner,
		signedOut: null,
		device: null
	};
	ids = { workshop: f.ws, packId: f.pack.id, sessionId: f.session.id, stepId: f.steps[0].id, specId: f.pack.cellSpecId, group: '1' };

	const [chargerId, profileId, attachmentId, cellId] = await Promise.all([freshCharger(), freshProfile(), freshAttachment(), freshCell()]);
	Object.assign(ids, { chargerId, profileId, attachmentId });
	cellForEdit = cellId;

	const logged = await logReadings(
		{ kind: 'member', member: ownerA },
		f.session.id,
		[readingInputSchema.parse({ clientId: `m-${next()}`, groupIndex: 1, takenAt: new Date().toISOString(), volts: 3.9 })],
		'hand'
	);
	if (!logged.ok) throw new Error(logged.message);
	ids.readingId = String(logged.readings[0].id);

	const [alert] = await db
		.insert(alerts)
		.values({
			id: newId(),
			workshopId: ownerA.workshop.id,
			packId: f.pack.id,
			sessionId: f.session.id,
			groupId: f.groups[0].id,
			groupKey: f.groups[0].id,
			kind: 'over-voltage',
			severity: 'warning',
			title: 'Group 1: over voltage',
			message: 'Group 1 is at 4.31 V, over the 4.25 V limit.',
			value: 4.31,
			threshold: 4.25,
			unit: 'V'
		})
		.returning();
	ids.alertId = alert.id;

	const token = await issueDeviceToken(ownerA, f.session.id, 'Matrix logger');
	if (!token.ok) throw new Error(token.message);
	ids.tokenId = token.device.id;
	// The device actor holds a token of another session of the same pack.
	const second = await addSession(ownerA, f.pack.id, 'planned');
	const foreign = await issueDeviceToken(ownerA, second.id, 'Other logger');
	if (!foreign.ok) throw new Error(foreign.message);
	deviceToken = foreign.token;

	// Both workshops have a logger column map, so a logger upload reaches its session check.
	const mapping = { time: 'time', group: 'group', volts: 'volts' };
	await Promise.all([saveLoggerMapping(ownerA, mapping), saveLoggerMapping(otherOwner, mapping)]);

	const invited = await inviteMember(ownerA, { email: uniqueEmail('nobody'), role: 'technician' });
	if (!invited.ok) throw new Error('invite failed');
	ids.token = invited.link.split('/invite/')[1];
	ids.provider = 'oauth';
});

afterAll(async () => {
	await rm(scratchEnv.CELLSITTER_DATA_DIR, { recursive: true, force: true });
	for (const [k, v] of Object.entries(savedEnv)) {
		if (v === undefined) delete process.env[k];
		else process.env[k] = v;
	}
	rereadServerEnv();
});

// ---------------------------------------------------------------------------------------------
// What each route is sent: the record ids of A in its URL, and a body that gets past validation
// where one is cheap to write (so the id check behind it is reached), else a minimal one.

type Send = {
	params?: Ids;
	query?: string;
	json?: unknown;
	form?: Record<string, string>;
	/** A superforms form with dataType 'json'. */
	superJson?: unknown;
};

const chargerBody = () => ({
	name: `Matrix supply ${next()}`,
	kind: 'bench-supply',
	notes: '',
	channels: [{ name: 'Out', maxVolts: 30, maxAmps: 10, maxWatts: null, balanceAmps: null, maxSeriesCells: null }]
});

const sends: Record<string, (actor: Actor) => Send | Promise<Send>> = {
	[`${w}/alerts/[alertId=id]/+page.server.ts action:acknowledge`]: () => ({ form: { note: 'seen' } }),
	[`${w}/alerts/alerts.csv/+server.ts GET`]: () => ({ query: `session=${ids.sessionId}` }),
	[`${w}/cell-specs/[specId=id]/+page.server.ts action:default`]: () => ({
		form: {
			name: `Matrix spec ${next()}`,
			chemistry: 'builtin:nmc',
			capacityAh: '4',
			maxContinuousAmps: '15',
			maxBurstAmps: '30',
			maxChargeAmps: '4',
			resistanceMilliOhms: '16'
		}
	}),
	[`${w}/chargers/[chargerId=id]/+page.server.ts action:save`]: () => ({ superJson: chargerBody() }),
	[`${w}/chargers/[chargerId=id]/+page.server.ts action:delete`]: async () => ({ params: { chargerId: await freshCharger() } }),
	[`${w}/chemistries/[profileId=id]/+page.server.ts action:save`]: () => ({
		superJson: { name: `Matrix NMC ${next()}`, source: '', ...formValuesOf(chemistries.nmc) }
	}),
	[`${w}/chemistries/[profileId=id]/+page.server.ts action:delete`]: async () => ({ params: { profileId: await freshProfile() } }),
	[`${w}/packs/[packId=id]/attachments/[attachmentId=id]/+server.ts DELETE`]: async () => ({
		params: { attachmentId: await freshAttachment() }
	}),
	[`${w}/packs/[packId=id]/cells/+page.server.ts action:addCells`]: () => ({
		form: { rows: JSON.stringify([{ label: `A${next()}`, volts: '3.6' }]) }
	}),
	[`${w}/packs/[packId=id]/cells/+page.server.ts action:importCsv`]: () => ({ form: { csv: `label,volts\nI${next()},3.6\n` } }),
	[`${w}/packs/[packId=id]/cells/+page.server.ts action:correct`]: () => ({
		form: { cellId: cellForEdit, label: '', volts: '3.61', resistanceMilliOhms: '', capacityAh: '' }
	}),
	[`${w}/packs/[packId=id]/cells/+page.server.ts action:remove`]: async () => ({ form: { cellId: await freshCell() } }),
	[`${w}/packs/[packId=id]/edit/+page.server.ts action:default`]: () => ({
		form: {
			name: 'Test pack',
			cellSpecId: ids.specId,
			series: '2',
			parallel: '2',
			status: 'building',
			packOwnerId: who.packViewer!.user.id,
			notes: 'matrix'
		}
	}),
	[`${w}/packs/new/+page.server.ts action:default`]: () => ({
		form: { name: `Matrix ${next()}`, cellSpecId: ids.specId, series: '2', parallel: '1', status: 'planning', packOwnerId: who.packViewer!.user.id, notes: '' }
	}),
	[`${w}/packs/[packId=id]/self-discharge/+page.server.ts action:record`]: () => ({ form: { measuredAt: '' } }),
	[`${w}/sessions/[sessionId=id]/+page.server.ts action:startStep`]: () => ({ form: { stepId: ids.stepId } }),
	[`${w}/sessions/[sessionId=id]/+page.server.ts action:finishStep`]: () => ({ form: { stepId: ids.stepId } }),
	// A running session of its own for each request, so a stop that is allowed stops nothing else.
	[`${w}/sessions/[sessionId=id]/+page.server.ts action:stop`]: async () => ({
		params: { sessionId: (await addSession(ownerA, ids.packId, 'running')).id },
		form: { reason: 'Group 1 got warm' }
	}),
	[`${w}/sessions/[sessionId=id]/devices/+page.server.ts action:issue`]: () => ({ form: { name: `Logger ${next()}` } }),
	[`${w}/sessions/[sessionId=id]/devices/+page.server.ts action:revoke`]: () => ({ form: { tokenId: ids.tokenId } }),
	[`${w}/sessions/[sessionId=id]/plan/+page.server.ts action:default`]: () => ({ form: { plan: '{}' } }),
	[`${w}/sessions/[sessionId=id]/upload/+page.server.ts action:importCsv`]: () => ({
		form: { csv: 'time,group,volts\n2026-01-01T10:00:00Z,1,3.9\n' }
	}),
	// A member and an invitation of A made for each request: another workshop's owner must not
	// reach them through their own workshop's URL (checked after the matrix).
	[`${w}/workshop/members/+page.server.ts action:changeRole`]: async (actor) => ({
		form: { userId: await freshMemberOfA(actor), role: 'technician' }
	}),
	[`${w}/workshop/members/+page.server.ts action:remove`]: async (actor) => ({ form: { userId: await freshMemberOfA(actor) } }),
	[`${w}/workshop/members/+page.server.ts action:revoke`]: async (actor) => ({ form: { invitationId: await freshInvitationOfA(actor) } }),
	'(auth)/forgot/+page.server.ts action:default': () => ({ form: { email: uniqueEmail('forgot') } }),
	'(auth)/login/+page.server.ts action:default': () => ({ form: { email: uniqueEmail('login'), password: 'not the password' } }),
	'(auth)/reset/[token]/+page.server.ts action:default': () => ({ params: { token: 'no-such-token' } }),
	'(auth)/reset/[token]/+page.server.ts load': () => ({ params: { token: 'no-such-token' } }),
	'api/push-subscriptions/+server.ts POST': () => ({ json: {} }),
	'api/push-subscriptions/+server.ts DELETE': () => ({ json: {} }),
	[`${api}/alert-settings/+server.ts PATCH`]: () => ({ json: {} }),
	[`${api}/alerts/[alertId=id]/ack/+server.ts POST`]: () => ({ json: { note: 'seen' } }),
	[`${api}/chargers/+server.ts POST`]: () => ({ json: {} }),
	// A's cell spec and A's viewer as pack owner: workshop B, which has no cell spec of its own,
	// must end with no pack at all (checked after the matrix).
	[`${api}/packs/+server.ts POST`]: () => ({
		json: { name: `Matrix ${next()}`, cellSpecId: ids.specId, series: 2, parallel: 1, packOwnerId: who.packViewer!.user.id }
	}),
	// Workshop B's owner named as pack owner, on watch or as a watcher of A's session: refused
	// however allowed the asker is (checked after the matrix).
	[`${api}/packs/[packId=id]/+server.ts PATCH`]: () => ({ json: { packOwnerId: who.other!.user.id } }),
	[`${api}/packs/[packId=id]/cells/+server.ts POST`]: () => ({ json: { cells: [{ label: `P${next()}`, volts: 3.6 }] } }),
	[`${api}/packs/[packId=id]/matching/+server.ts POST`]: () => ({ json: {} }),
	[`${api}/packs/[packId=id]/matching/+server.ts PUT`]: () => ({ json: { groups: [[cellForEdit]] } }),
	[`${api}/sessions/+server.ts POST`]: () => ({ json: {} }),
	[`${api}/sessions/[sessionId=id]/+server.ts PATCH`]: () => ({ json: { name: 'Matrix' } }),
	[`${api}/sessions/[sessionId=id]/readings/+server.ts POST`]: () => ({
		json: { readings: [{ clientId: `m-${next()}`, groupIndex: 1, takenAt: new Date().toISOString(), volts: 3.9 }] }
	}),
	[`${api}/sessions/[sessionId=id]/readings/[readingId=num]/+server.ts PATCH`]: () => ({ json: { note: 'checked' } }),
	[`${api}/sessions/[sessionId=id]/status/+server.ts POST`]: () => ({ json: { action: 'start' } }),
	// The step is running already: starting it again is a conflict, past the access check.
	[`${api}/sessions/[sessionId=id]/steps/[stepId=id]/+server.ts POST`]: () => ({ json: { action: 'start' } }),
	[`${api}/sessions/[sessionId=id]/tokens/+server.ts POST`]: () => ({ json: { name: `Logger ${next()}` } }),
	[`${api}/sessions/[sessionId=id]/watch/+server.ts POST`]: () => ({ json: { userId: who.other!.user.id } }),
	[`${api}/sessions/[sessionId=id]/watchers/+server.ts POST`]: () => ({ json: { userId: who.other!.user.id, watching: true } })
};

// ---------------------------------------------------------------------------------------------

function cookieJar() {
	const jar = new Map<string, string>();
	return {
		get: (name: string) => jar.get(name),
		getAll: () => [...jar].map(([name, value]) => ({ name, value })),
		set: (name: string, value: string) => void jar.set(name, value),
		delete: (name: string) => void jar.delete(name),
		serialize: () => ''
	};
}

function methodOf(route: RouteEntry): string {
	if (route.entry === 'load') return 'GET';
	if (route.entry.startsWith('action:')) return 'POST';
	return route.entry;
}

/** The request event an actor's request would reach the route with. */
async function eventFor(route: RouteEntry, actor: Actor, aborter: AbortController) {
	const send = (await sends[route.key]?.(actor)) ?? {};
	const all: Ids = { ...ids, ...(actor === 'otherIds' ? { workshop: slugB } : {}), ...send.params };
	const params = Object.fromEntries(paramNames(route.pattern).map((name) => [name, all[name]]));
	const url = new URL(`http://127.0.0.1${fillPattern(route.pattern, all)}${send.query ? `?${send.query}` : ''}`);
	const method = methodOf(route);
	const headers = new Headers();
	let body: BodyInit | undefined;
	if (actor === 'device') headers.set('authorization', `Bearer ${deviceToken}`);
	if (send.json !== undefined) {
		headers.set('content-type', 'application/json');
		body = JSON.stringify(send.json);
	} else if (send.form || send.superJson !== undefined || route.entry.startsWith('action:')) {
		const form = new FormData();
		for (const [k, v] of Object.entries(send.form ?? {})) form.append(k, v);
		if (send.superJson !== undefined) form.append('__superform_json', stringify(send.superJson));
		body = form;
	}
	const member = who[actor];
	// What the actor sent itself: an answer that echoes it back (a form with its values) shows them nothing new.
	const sent = `${url} ${send.json === undefined ? '' : JSON.stringify(send.json)} ${JSON.stringify(send.form ?? {})} ${JSON.stringify(send.superJson ?? null)}`;
	return {
		sent,
		locals: { user: member?.user ?? null, session: null },
		params,
		url,
		route: { id: route.pattern },
		request: new Request(url, { method, headers, body, signal: aborter.signal }),
		cookies: cookieJar(),
		// Not loopback: the sign-in and reset limits it counts must not block the browser tests' sign-ins
		// from 127.0.0.1, which run on the same database after the integration tests.
		getClientAddress: () => '192.0.2.31',
		setHeaders: () => {},
		depends: () => {},
		untrack: <T>(fn: () => T) => fn(),
		parent: async () => ({}),
		fetch,
		isDataRequest: false,
		isSubRequest: false,
		platform: undefined
	};
}

/** An outcome in the table's words, what was answered (for the failure message), and its text. */
type Got = { kind: string; detail: string; text: string };

function byStatus(status: number, how: string, text: string): Got {
	const kind = status === 401 || status === 403 || status === 404 ? String(status) : status >= 500 ? 'server error' : 'ok';
	return { kind, detail: `${how} ${status}`, text };
}

function byRedirect(status: number, location: string): Got {
	const target = new URL(location, 'http://127.0.0.1');
	const kind = target.pathname === '/login' ? 'login' : 'ok';
	// ?next= is the asker's own URL, handed back to come back to after signing in.
	target.searchParams.delete('next');
	return { kind, detail: `redirect ${status} ${location}`, text: target.pathname + target.search };
}

/** Data as text, to look for ids in (superforms' objects, dates and all). */
function textOf(data: unknown): string {
	try {
		return JSON.stringify(data, (_, v: unknown) => (typeof v === 'bigint' ? String(v) : v)) ?? '';
	} catch {
		return String(data);
	}
}

/** What an actor's request to a route came to. */
async function outcomeOf(route: RouteEntry, actor: Actor): Promise<Got & { sent: string }> {
	const aborter = new AbortController();
	const event = await eventFor(route, actor, aborter);
	return { ...(await answerTo(route, event, aborter)), sent: event.sent };
}

async function answerTo(route: RouteEntry, event: unknown, aborter: AbortController): Promise<Got> {
	try {
		const result = await route.run(event);
		if (result instanceof Response) {
			const location = result.headers.get('location');
			// JSON and CSV are read (to look for ids in them); streams (server-sent events, zips,
			// files) are not: the status is what counts.
			const type = result.headers.get('content-type') ?? '';
			const text = /json|csv|text\/plain/.test(type) ? await result.text() : '';
			if (!text) await result.body?.cancel().catch(() => {});
			if (result.status >= 300 && result.status < 400 && location) return byRedirect(result.status, location);
			return byStatus(result.status, 'response', text);
		}
		if (isActionFailure(result)) return byStatus(result.status, 'fail()', textOf(result.data));
		return { kind: 'ok', detail: 'returned data', text: textOf(result) };
	} catch (e) {
		if (isRedirect(e)) return byRedirect(e.status, e.location);
		if (isHttpError(e)) return byStatus(e.status, 'error()', textOf(e.body));
		return { kind: 'threw', detail: e instanceof Error ? e.message : String(e), text: '' };
	} finally {
		aborter.abort();
	}
}

/** Actors who must never be shown a record of the pack (or of workshop A at all, for the last four). */
const blind: Actor[] = ['viewer', 'other', 'otherIds', 'signedOut', 'device'];

/** The ids of workshop A's records that the blind actors must not see, by what they are. */
function privateIds(): [string, string][] {
	const names = ['packId', 'sessionId', 'stepId', 'alertId', 'attachmentId', 'chargerId', 'profileId', 'specId', 'tokenId'];
	return names.map((n) => [n, ids[n]]);
}

describe('authorization matrix', () => {
	let routes: RouteEntry[];

	beforeAll(async () => {
		routes = await routeTree();
	});

	it('finds the routes in the tree (pages, actions and API routes)', () => {
		expect(routes.length).toBeGreaterThan(100);
		const kinds = new Set(routes.map((r) => (r.entry.startsWith('action:') ? 'action' : r.entry)));
		expect([...kinds].sort()).toEqual(expect.arrayContaining(['DELETE', 'GET', 'PATCH', 'POST', 'PUT', 'action', 'load']));
	});

	it('has a row for every route in the tree, and none for a route that is gone', () => {
		const found = new Set(routes.map((r) => r.key));
		const undeclared = [...found].filter((k) => !(k in expected)).map((k) => `${k}: declare its permission in the table`);
		const stale = Object.keys(expected).filter((k) => !found.has(k)).map((k) => `${k}: no such route any more`);
		expect([...undeclared, ...stale]).toEqual([]);
		for (const [key, row] of Object.entries(expected)) {
			expect(row.split(' '), key).toHaveLength(actors.length);
		}
	});

	it('answers every actor on every route as the table says', async () => {
		const leaks: string[] = [];
		const secrets = privateIds();
		const shownToPackViewer = new Set<string>();
		let cells = 0;
		for (const route of routes) {
			const row = expected[route.key]?.split(' ');
			if (!row) continue;
			for (const [i, actor] of actors.entries()) {
				const got = await outcomeOf(route, actor);
				cells++;
				if (process.env.MATRIX_DUMP) console.log(`${route.key} | ${actor} | ${got.kind} | ${got.detail}`);
				if (got.kind !== (row[i] as Outcome)) leaks.push(`${route.key} as ${actor}: expected ${row[i]}, got ${got.kind} (${got.detail})`);
				for (const [name, id] of secrets) {
					if (!got.text.includes(id) || got.sent.includes(id)) continue;
					if (blind.includes(actor)) leaks.push(`${route.key} as ${actor}: the answer shows ${name} ${id}`);
					if (actor === 'packViewer') shownToPackViewer.add(name);
				}
			}
		}
		expect(cells).toBeGreaterThan(900);
		expect(leaks).toEqual([]);
		// The search for ids can fail: the pack's own viewer is shown them.
		expect([...shownToPackViewer].sort()).toEqual(expect.arrayContaining(['alertId', 'attachmentId', 'packId', 'sessionId']));

		// Nothing a denied actor or another workshop sent changed workshop A: no audited change by
		// them, and the members and invitations made for their requests are as they were.
		const outsiders = [who.viewer!, who.packViewer!, who.other!].map((m) => m.user.id);
		const audited = await db
			.select({ kind: auditEvents.kind, actorId: auditEvents.actorId })
			.from(auditEvents)
			.where(and(eq(auditEvents.workshopId, ownerA.workshop.id), inArray(auditEvents.actorId, outsiders)));
		expect(audited).toEqual([]);
		const changed: string[] = [];
		for (const check of untouched) if (check.actor !== 'owner' && !(await check.holds())) changed.push(`${check.actor}: ${check.what}`);
		expect(changed).toEqual([]);
		const packsOfB = await db.select({ id: packs.id }).from(packs).where(eq(packs.workshopId, who.otherIds!.workshop.id));
		expect(packsOfB).toEqual([]);
		const outsider = who.other!.user.id;
		const [pack] = await db.select({ packOwnerId: packs.packOwnerId }).from(packs).where(eq(packs.id, ids.packId));
		expect(pack.packOwnerId).toBe(who.packViewer!.user.id);
		const [session] = await db.select({ watchUserId: chargeSessions.watchUserId }).from(chargeSessions).where(eq(chargeSessions.id, ids.sessionId));
		expect(session.watchUserId).not.toBe(outsider);
		expect(await db.select().from(sessionWatchers).where(eq(sessionWatchers.userId, outsider))).toEqual([]);
		// …while the owner's own requests did change them (so the checks can fail).
		const byOwner = untouched.filter((c) => c.actor === 'owner');
		expect(byOwner.length).toBe(3);
		expect(await Promise.all(byOwner.map((c) => c.holds()))).toEqual([false, false, false]);
	});
});

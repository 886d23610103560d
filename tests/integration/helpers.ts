/** Small helpers for integration tests: unique accounts, the fake mailbox. */
import { randomUUID } from 'node:crypto';
import { eq } from 'drizzle-orm';
import type { Role } from '$lib/permissions';
import { signUp } from '$lib/server/accounts';
import { findMember, type Member } from '$lib/server/auth/permissions';
import { createCellSpec } from '$lib/server/cell-specs';
import { db } from '$lib/server/db';
import { users } from '$lib/server/db/schema';
import { createPack } from '$lib/server/packs';
import { acceptInvitation, inviteMember } from '$lib/server/workshops-invitations';

/** An e-mail no other test (or earlier run against the same database) uses. */
export function uniqueEmail(label: string): string {
	return `${label}-${randomUUID().slice(0, 8)}@tests.cellsitter.test`;
}

export async function signUpOwner(label = 'owner', password = 'correct horse battery') {
	const email = uniqueEmail(label);
	const result = await signUp({
		email,
		name: `Test ${label}`,
		password,
		workshop: { name: `Bench ${label}`, timeZone: 'Europe/Berlin' }
	});
	if (!result.ok) throw new Error(`sign-up failed: ${result.reason}`);
	return { ...result, email, password };
}

export type CaughtMail = { to: string[]; subject: string; text: string; messageId: string };

/** Messages the fake SMTP server caught for an address, newest first. */
export async function mailTo(address: string): Promise<CaughtMail[]> {
	const response = await fetch(`${process.env.FAKES_URL}/messages?to=${encodeURIComponent(address)}`);
	return (await response.json()) as CaughtMail[];
}

/** The first link in a message's text that contains `path`. */
export function linkIn(mail: CaughtMail, path: string): string {
	const link = mail.text.match(/https?:\/\/\S+/g)?.find((l) => l.includes(path));
	if (!link) throw new Error(`no ${path} link in "${mail.subject}"`);
	return link;
}

/** The member record of a user in a workshop, as requireMember would build it. */
export async function memberOf(userId: string, slug: string): Promise<Member> {
	const [user] = await db.select().from(users).where(eq(users.id, userId));
	const member = await findMember({ id: user.id, email: user.email, name: user.name }, slug);
	if (!member) throw new Error('not a member');
	return member;
}

/** A new person who joins the owner's workshop with `role` through a real invitation. */
export async function joinAs(owner: Member, role: Role): Promise<Member> {
	const person = await signUpOwner(role);
	const invited = await inviteMember(owner, { email: person.email, role });
	if (!invited.ok) throw new Error('invite failed');
	const accepted = await acceptInvitation({ id: person.userId, email: person.email }, invited.link.split('/invite/')[1]);
	if (!accepted.ok) throw new Error(`accept failed: ${accepted.reason}`);
	return memberOf(person.userId, owner.workshop.slug);
}

/** An owner, their workshop, a cell spec and a pack, made through the real server functions. */
export async function packFixture(opts: { series: number; parallel: number; chemistry?: string; capacityAh?: number }) {
	const owner = await signUpOwner('packs');
	const member = await memberOf(owner.userId, owner.workshopSlug);
	const spec = await createCellSpec(member, {
		name: `Spec ${randomUUID().slice(0, 6)}`,
		chemistry: opts.chemistry ?? 'builtin:nmc',
		capacityAh: opts.capacityAh ?? 4,
		maxContinuousAmps: 15,
		maxBurstAmps: 30,
		maxChargeAmps: 4,
		resistanceMilliOhms: 16
	});
	if (!spec.ok) throw new Error(spec.message);
	const pack = await addPack(member, { name: 'Test pack', cellSpecId: spec.spec.id, series: opts.series, parallel: opts.parallel });
	return { owner: member, pack, spec: spec.spec };
}

/** Another pack of the member's workshop (building, no BMS, no owner), or throws. */
export async function addPack(member: Member, opts: { name: string; cellSpecId: string; series: number; parallel: number }) {
	const pack = await createPack(member, {
		...opts,
		bmsFitted: false,
		bmsBalanceAmps: null,
		status: 'building',
		packOwnerId: '',
		measuredPeakAmps: null,
		measuredPeakNote: '',
		notes: ''
	});
	if (!pack.ok) throw new Error(pack.message);
	return pack.pack;
}

/** A request event for calling an API route's handler directly, as `who` (null: signed out). */
export function apiEvent<E>(
	who: Member | null,
	path: string,
	params: Record<string, string>,
	init: { method?: string; body?: unknown } = {}
): E {
	const url = new URL(`http://127.0.0.1${path}`);
	return {
		locals: { user: who?.user ?? null, session: null },
		params,
		url,
		request: new Request(url, {
			method: init.method ?? 'GET',
			body: init.body === undefined ? undefined : typeof init.body === 'string' ? init.body : JSON.stringify(init.body),
			headers: init.body === undefined ? undefined : { 'content-type': 'application/json' }
		})
	} as unknown as E;
}

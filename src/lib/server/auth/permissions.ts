import { error, redirect } from '@sveltejs/kit';
import { and, eq } from 'drizzle-orm';
import { can, roleLabels, type Action, type Role } from '$lib/permissions';
import { db } from '../db';
import { memberships, workshops, type Workshop } from '../db/schema';
import type { SessionUser } from './session';

export type Member = { user: SessionUser; workshop: Workshop; role: Role };

const actionWords: Partial<Record<Action, string>> = {
	'members.manage': 'manage members',
	'workshop.edit': 'change the workshop',
	'packs.edit': 'change packs',
	'chargers.edit': 'change chargers',
	'plans.edit': 'plan or start sessions',
	'sessions.run': 'run sessions (pause, stop, steps or the watch)',
	'readings.log': 'log or edit readings',
	'specs.edit': 'change cell specs or chemistry profiles',
	'measurements.edit': 'record cell measurements',
	'attachments.add': 'add or remove files'
};

/** The signed-in user, or a redirect to sign-in that comes back here. */
export function requireUser(locals: App.Locals, url: URL): SessionUser {
	if (!locals.user) {
		redirect(303, `/login?next=${encodeURIComponent(url.pathname + url.search)}`);
	}
	return locals.user;
}

/** The signed-in user's membership of the workshop in the URL; 404 when they are not a member. */
export async function requireMember(
	locals: App.Locals,
	params: { workshop?: string },
	url: URL
): Promise<Member> {
	const user = requireUser(locals, url);
	const member = params.workshop ? await findMember(user, params.workshop) : null;
	// Never confirm that another workshop exists.
	if (!member) error(404, 'Not found');
	return member;
}

export async function findMember(user: SessionUser, slug: string): Promise<Member | null> {
	const [row] = await db
		.select({ workshop: workshops, role: memberships.role })
		.from(memberships)
		.innerJoin(workshops, eq(workshops.id, memberships.workshopId))
		.where(and(eq(memberships.userId, user.id), eq(workshops.slug, slug)))
		.limit(1);
	return row ? { user, workshop: row.workshop, role: row.role } : null;
}

/** 403 unless the member's role allows the action. */
export function requirePermission(member: Member, action: Action): void {
	if (!can(member.role, action)) {
		const what = actionWords[action] ?? 'do this';
		error(403, `A ${roleLabels[member.role].toLowerCase()} cannot ${what} in this workshop.`);
	}
}

/** Like requireMember + requirePermission, for actions and endpoints. */
export async function requireMemberWith(
	locals: App.Locals,
	params: { workshop?: string },
	url: URL,
	action: Action
): Promise<Member> {
	const member = await requireMember(locals, params, url);
	requirePermission(member, action);
	return member;
}

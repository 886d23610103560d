/**
 * A member's own alert settings in one workshop: e-mail on or off, push on or off, and a quiet
 * time (in the workshop's zone) that holds back information alerts only — never warnings or
 * critical alerts, and never while the member is the technician on watch (alert-routing decides).
 */
import { and, eq } from 'drizzle-orm';
import type { AlertSettings, AlertSettingsPatch } from '$lib/schemas/alert-settings';
import { requirePermission, type Member } from '../auth/permissions';
import { db } from '../db';
import { memberships } from '../db/schema';

const columns = {
	emailAlerts: memberships.emailAlerts,
	pushAlerts: memberships.pushAlerts,
	quietFrom: memberships.quietFrom,
	quietTo: memberships.quietTo
};

const mine = (member: Member) => and(eq(memberships.workshopId, member.workshop.id), eq(memberships.userId, member.user.id));

export async function getAlertSettings(member: Member): Promise<AlertSettings> {
	requirePermission(member, 'workshop.view');
	const [row] = await db.select(columns).from(memberships).where(mine(member));
	return row;
}

/** Changes only the keys given (one statement); answers the settings as they now are. */
export async function updateAlertSettings(member: Member, patch: AlertSettingsPatch): Promise<AlertSettings> {
	requirePermission(member, 'workshop.view');
	const set: Partial<AlertSettings> = {};
	if (patch.emailAlerts !== undefined) set.emailAlerts = patch.emailAlerts;
	if (patch.pushAlerts !== undefined) set.pushAlerts = patch.pushAlerts;
	if (patch.quietFrom !== undefined) set.quietFrom = patch.quietFrom;
	if (patch.quietTo !== undefined) set.quietTo = patch.quietTo;
	if (Object.keys(set).length === 0) return getAlertSettings(member);
	const [row] = await db.update(memberships).set(set).where(mine(member)).returning(columns);
	return row;
}

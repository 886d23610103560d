/**
 * Role → allowed actions: the one place that says who may do what (product.md, "Workshops and
 * people"). Client-safe so screens can hide what a role cannot do; the server asks it on every
 * load, action and endpoint (src/lib/server/auth/permissions.ts).
 */
export const roles = ['owner', 'builder', 'technician', 'viewer'] as const;
export type Role = (typeof roles)[number];

export const actions = [
	'workshop.view',
	'workshop.edit',
	'members.view',
	'members.manage',
	'packs.viewAll',
	'packs.viewOwn',
	'packs.edit',
	'specs.edit',
	'chargers.view',
	'chargers.edit',
	'plans.edit',
	'sessions.view',
	'sessions.run',
	'readings.log',
	'measurements.edit',
	'attachments.add',
	'alerts.view',
	'alerts.acknowledge'
] as const;
export type Action = (typeof actions)[number];

const everyone: Action[] = ['workshop.view', 'packs.viewOwn', 'sessions.view', 'alerts.view'];
const staff: Action[] = [...everyone, 'members.view', 'packs.viewAll', 'chargers.view'];
const hands: Action[] = [
	...staff,
	'sessions.run',
	'readings.log',
	'measurements.edit',
	'attachments.add',
	'alerts.acknowledge'
];
const building: Action[] = [...hands, 'packs.edit', 'specs.edit', 'chargers.edit', 'plans.edit'];

const allowed: Record<Role, ReadonlySet<Action>> = {
	owner: new Set([...building, 'workshop.edit', 'members.manage']),
	builder: new Set(building),
	technician: new Set(hands),
	viewer: new Set(everyone)
};

export function can(role: Role, action: Action): boolean {
	return allowed[role].has(action);
}

export function allowedActions(role: Role): Action[] {
	return actions.filter((a) => allowed[role].has(a));
}

export const roleLabels: Record<Role, string> = {
	owner: 'Owner',
	builder: 'Builder',
	technician: 'Technician',
	viewer: 'Viewer'
};

export const roleDescriptions: Record<Role, string> = {
	owner: 'Everything, including members and the workshop itself',
	builder: 'Packs, cell specs, chargers and charge plans',
	technician: 'Runs sessions, logs readings and measurements, acknowledges alerts',
	viewer: 'Reads the packs they own'
};

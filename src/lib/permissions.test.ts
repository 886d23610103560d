import { describe, expect, it } from 'vitest';
import { actions, can, roles, type Action, type Role } from './permissions';

// The matrix as product.md ("Workshops and people") describes the roles, written out by hand —
// not derived from the module: owner everything; builder packs, specs, chargers, plans;
// technician runs sessions, logs readings and measurements, acknowledges alerts; viewer reads
// the packs they own.
//                     owner  builder technician viewer
const matrix: Record<Action, [boolean, boolean, boolean, boolean]> = {
	'workshop.view': [true, true, true, true],
	'workshop.edit': [true, false, false, false],
	'members.view': [true, true, true, false],
	'members.manage': [true, false, false, false],
	'packs.viewAll': [true, true, true, false],
	'packs.viewOwn': [true, true, true, true],
	'packs.edit': [true, true, false, false],
	'specs.edit': [true, true, false, false],
	'chargers.view': [true, true, true, false],
	'chargers.edit': [true, true, false, false],
	'plans.edit': [true, true, false, false],
	'sessions.view': [true, true, true, true],
	'sessions.run': [true, true, true, false],
	'readings.log': [true, true, true, false],
	'measurements.edit': [true, true, true, false],
	'attachments.add': [true, true, true, false],
	'alerts.view': [true, true, true, true],
	'alerts.acknowledge': [true, true, true, false]
};

const order: Role[] = ['owner', 'builder', 'technician', 'viewer'];
const cases = Object.entries(matrix).flatMap(([action, row]) =>
	order.map((role, i) => ({ role, action: action as Action, allowed: row[i] }))
);

describe('permissions', () => {
	it('covers every action and role in the table', () => {
		expect(Object.keys(matrix).sort()).toEqual([...actions].sort());
		expect([...roles].sort()).toEqual([...order].sort());
	});

	it.each(cases)('$role → $action: $allowed', ({ role, action, allowed }) => {
		expect(can(role, action)).toBe(allowed);
	});
});

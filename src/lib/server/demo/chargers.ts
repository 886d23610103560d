/** The demo workshop's chargers (shared docs: demo-scenario.md) — invented equipment, not a test's check value. */
import type { Tx } from '../db';
import { chargerChannels, chargers } from '../db/schema';
import { newId } from '../ids';

type DemoChannel = {
	name: string;
	maxVolts: number;
	maxAmps: number;
	maxWatts?: number;
	balanceAmps?: number;
	maxSeriesCells?: number;
};

// The scenario gives the hobby charger 6S per channel but no voltage: 26.1 V (6 × 4.35 V, room
// for a LiHV set point) is our own invented figure.
const hobbyChannel = (n: number): DemoChannel => ({
	name: `Channel ${n}`,
	maxVolts: 26.1,
	maxAmps: 8,
	maxWatts: 100,
	balanceAmps: 0.3,
	maxSeriesCells: 6
});

const demoChargers: { name: string; kind: 'bench-supply' | 'multi-channel' | 'pack-charger'; notes: string; channels: DemoChannel[] }[] = [
	{
		name: 'Bench supply',
		kind: 'bench-supply',
		notes: 'Single output, constant voltage and constant current, 0–30 V and 0–5 A, 150 W at most.',
		channels: [{ name: 'Output', maxVolts: 30, maxAmps: 5, maxWatts: 150 }]
	},
	{
		name: 'Four-channel hobby charger',
		kind: 'multi-channel',
		notes:
			'Four isolated channels, each up to 8 A and 100 W; 400 W in all across the four. Balance current 0.3 A per channel, up to 6 cells in series.',
		channels: [1, 2, 3, 4].map(hobbyChannel)
	},
	{
		name: '13S NMC pack charger',
		kind: 'pack-charger',
		notes: 'Fixed 54.6 V output (13 × 4.2 V) for the cargo trike pack, 5 A.',
		channels: [{ name: 'Output', maxVolts: 54.6, maxAmps: 5, maxSeriesCells: 13 }]
	}
];

/** Inserts the scenario's three chargers into the demo workshop, inside the demo loader's transaction. */
export async function loadDemoChargers(tx: Tx, workshopId: string, userId: string): Promise<void> {
	const rows = demoChargers.map((c) => ({ ...c, id: newId() }));
	await tx.insert(chargers).values(
		rows.map((c) => ({
			id: c.id,
			workshopId,
			name: c.name,
			kind: c.kind,
			notes: c.notes,
			createdBy: userId,
			updatedBy: userId
		}))
	);
	await tx.insert(chargerChannels).values(
		rows.flatMap((c) =>
			c.channels.map((ch, i) => ({
				id: newId(),
				chargerId: c.id,
				position: i + 1,
				name: ch.name,
				maxVolts: ch.maxVolts,
				maxAmps: ch.maxAmps,
				maxWatts: ch.maxWatts ?? null,
				balanceAmps: ch.balanceAmps ?? null,
				maxSeriesCells: ch.maxSeriesCells ?? null
			}))
		)
	);
}

/**
 * The one pg-boss instance of this process, and `enqueue` for code that hands work to a job.
 *
 * pg-boss 10 keeps its queues in PostgreSQL (schema `pgboss`, made by `start()`), opens its own
 * `pg` pool beside postgres.js, and needs `createQueue(name)` before `send` or `work`.
 * This file imports no job handler, so any server module may enqueue without an import cycle.
 */
import PgBoss from 'pg-boss';
import { serverEnv } from '../env';
import type { JobData, QueueName } from './registry';

export type BossMode = {
	/** Run the maintenance (expiry, archive, deletion of old jobs); one process of several is enough. */
	supervise: boolean;
	/** Run the clock that turns schedules into jobs. */
	schedule: boolean;
};

type Held = { boss: PgBoss; started: Promise<PgBoss>; queues: Set<string> };

// Kept on globalThis: vite's hot reload re-imports this module, and a second boss would open a
// second pool and run a second clock.
const slot = globalThis as typeof globalThis & { __cellsitterBoss?: Held };

/** Only enqueues (no maintenance, no clock): what tests and a process with jobs off need. */
const SEND_ONLY: BossMode = { supervise: false, schedule: false };

/** Starts the boss once in this process; a later call returns the same one, whatever its mode. */
export function startBoss(mode: BossMode = SEND_ONLY): Promise<PgBoss> {
	if (slot.__cellsitterBoss) return slot.__cellsitterBoss.started;
	const boss = new PgBoss({
		connectionString: serverEnv().DATABASE_URL,
		application_name: 'cellsitter-jobs',
		// Small: workers here run a handful of short jobs at a time; postgres.js has its own pool.
		max: 4,
		supervise: mode.supervise,
		// The maintenance is what fails a job past its expiry (a delivery its dead process held, see
		// alerts/deliver.ts): every 10 s rather than pg-boss's 120. One process runs it per interval.
		maintenanceIntervalSeconds: 10,
		schedule: mode.schedule
	});
	boss.on('error', (e) => console.error('[jobs]', e));
	const held: Held = { boss, started: boss.start(), queues: new Set() };
	slot.__cellsitterBoss = held;
	held.started.catch(() => {
		if (slot.__cellsitterBoss === held) slot.__cellsitterBoss = undefined;
	});
	return held.started;
}

/** Creates a queue once per process (pg-boss refuses send/work/schedule on an unknown queue). */
export async function ensureQueue(name: string, options: Omit<PgBoss.Queue, 'name'> = {}): Promise<PgBoss> {
	const boss = await startBoss();
	const queues = slot.__cellsitterBoss!.queues;
	if (!queues.has(name)) {
		await boss.createQueue(name, { name, ...options });
		queues.add(name);
	}
	return boss;
}

/** Puts one job on a queue; it runs in whichever process works that queue (docs/architecture.md). */
export async function enqueue<Q extends QueueName>(queue: Q, data: JobData<Q>): Promise<string> {
	const boss = await ensureQueue(queue);
	const id = await boss.send(queue, data as object);
	if (!id) throw new Error(`pg-boss did not accept a job on ${queue}`);
	return id;
}

const workerSlot = globalThis as typeof globalThis & { __cellsitterWorkers?: Map<string, string[]> };

/** Notes a worker this process runs for a queue (registry.ts), so that `wakeWorkers` can reach it. */
export function registerWorker(queue: string, workerId: string): void {
	const workers = (workerSlot.__cellsitterWorkers ??= new Map());
	workers.set(queue, [...(workers.get(queue) ?? []), workerId]);
}

/**
 * Wakes this process's workers of a queue now instead of at their next poll (a job just sent that
 * should not wait, such as an alert's delivery). A process that only sends has none: a no-op.
 */
export function wakeWorkers(queue: string): void {
	const held = slot.__cellsitterBoss;
	const ids = workerSlot.__cellsitterWorkers?.get(queue);
	if (!held || !ids?.length) return;
	void held.started.then((boss) => ids.forEach((id) => boss.notifyWorker(id))).catch(() => {});
}

/** Stops the boss: waits up to `timeoutMs` for running jobs, then closes its pool. */
export async function stopBoss(timeoutMs = 10_000): Promise<void> {
	const held = slot.__cellsitterBoss;
	if (!held) return;
	slot.__cellsitterBoss = undefined;
	workerSlot.__cellsitterWorkers = undefined;
	const boss = await held.started.catch(() => null);
	await boss?.stop({ graceful: true, wait: true, timeout: timeoutMs });
}

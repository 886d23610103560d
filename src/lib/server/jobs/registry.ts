/**
 * Every background job of Cellsitter, and starting or stopping them in this process.
 *
 * To add a job: write `jobs/<name>.ts` exporting `defineJob({ handle, options?, schedule? })`,
 * add it to `definitions` below, and `enqueue('<name>', data)` where the work arises
 * (DEVELOPERS.md, "Background jobs"). The queue, its worker and its schedule follow from here.
 */
import type PgBoss from 'pg-boss';
import { ensureQueue, registerWorker, startBoss, stopBoss } from './boss';
import { alertClockJob, deliverAlertJob } from './alerts';
import { closeFinishedSessionsJob } from './close-finished-sessions';
import type { JobDefinition } from './define';
import { passwordResetMail } from './password-reset-mail';
import { purgeExpired } from './purge-expired';
import { readingClockJob } from './reading-clock';

const definitions = {
	'password-reset-mail': passwordResetMail,
	'purge-expired': purgeExpired,
	'close-finished-sessions': closeFinishedSessionsJob,
	'reading-clock': readingClockJob,
	'deliver-alert': deliverAlertJob,
	'alert-clock': alertClockJob
};

export type QueueName = keyof typeof definitions;
export type JobData<Q extends QueueName> = Parameters<(typeof definitions)[Q]['handle']>[0];

export const queueNames = Object.keys(definitions) as QueueName[];

/**
 * `work`: this process runs the jobs (the app by default, or `npm run worker`).
 * `send-only`: it only puts jobs on queues (the app with CELLSITTER_JOBS=off beside a worker).
 */
export type JobsRole = 'work' | 'send-only';

function definitionOf(queue: QueueName): JobDefinition<object> {
	return definitions[queue] as JobDefinition<object>;
}

/** Creates every queue with its options and registers the schedules (both idempotent). */
export async function prepareQueues(boss: PgBoss): Promise<void> {
	for (const queue of queueNames) {
		const { options = {}, schedule } = definitionOf(queue);
		await ensureQueue(queue, options);
		// createQueue keeps an existing queue as it was: bring its options up to date.
		await boss.updateQueue(queue, { name: queue, ...options });
		if (schedule) await boss.schedule(queue, schedule.cron, schedule.data ?? {}, { tz: schedule.tz ?? 'UTC' });
	}
}

/**
 * Runs a handler over the batch pg-boss hands out, side by side; any failure fails the batch (and
 * pg-boss retries its jobs), after every job of it has finished.
 */
function worker(queue: QueueName) {
	const { handle } = definitionOf(queue);
	return async (jobs: PgBoss.Job<object>[]) => {
		const outcomes = await Promise.allSettled(jobs.map((job) => handle(job.data)));
		const failed = outcomes.filter((o): o is PromiseRejectedResult => o.status === 'rejected');
		if (failed.length === 1) throw failed[0].reason;
		if (failed.length > 1) throw new AggregateError(failed.map((f) => f.reason), `${failed.length} jobs of ${queue} failed`);
	};
}

// On globalThis: vite's hot reload may run the server's init again, and workers registered
// twice would each poll the queues.
const slot = globalThis as typeof globalThis & { __cellsitterJobs?: Promise<PgBoss> };

async function start(role: JobsRole): Promise<PgBoss> {
	const boss = await startBoss(role === 'work' ? { supervise: true, schedule: true } : { supervise: false, schedule: false });
	await prepareQueues(boss);
	if (role === 'work') {
		for (const queue of queueNames) {
			const { pollingIntervalSeconds = 2, batchSize = 1 } = definitionOf(queue);
			registerWorker(queue, await boss.work(queue, { pollingIntervalSeconds, batchSize }, worker(queue)));
		}
	}
	return boss;
}

/** Starts pg-boss in this process with every queue (and, for `work`, every worker and schedule). */
export function startJobs(role: JobsRole): Promise<PgBoss> {
	const started = (slot.__cellsitterJobs ??= start(role));
	started.catch(() => {
		if (slot.__cellsitterJobs === started) slot.__cellsitterJobs = undefined;
	});
	return started;
}

/** Stops the workers (letting running jobs finish, up to 10 s) and closes pg-boss's pool. */
export async function stopJobs(): Promise<void> {
	slot.__cellsitterJobs = undefined;
	await stopBoss();
}

/**
 * Runs, now and in this process, every job waiting on one queue; returns what each handler gave.
 * For tests and one-off maintenance: the normal path is a worker polling the queue.
 */
export async function workQueueNow(queue: QueueName): Promise<unknown[]> {
	const boss = await ensureQueue(queue, definitionOf(queue).options);
	const { handle } = definitionOf(queue);
	const results: unknown[] = [];
	for (;;) {
		const jobs = await boss.fetch<object>(queue, { batchSize: 50 });
		if (jobs.length === 0) return results;
		for (const job of jobs) {
			try {
				results.push(await handle(job.data));
				await boss.complete(queue, job.id);
			} catch (e) {
				await boss.fail(queue, job.id, { message: String(e) });
				throw e;
			}
		}
	}
}

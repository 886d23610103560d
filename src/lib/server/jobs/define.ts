import type PgBoss from 'pg-boss';

/**
 * One kind of background job: what its queue keeps, when it runs by itself, what it does.
 * `handle` gets one job's data; throwing fails the job and pg-boss retries it per `options`.
 */
export type JobDefinition<T extends object> = {
	options?: Omit<PgBoss.Queue, 'name'>;
	/** Cron (5 fields, UTC unless tz) for jobs that run on a clock rather than on demand. */
	schedule?: { cron: string; tz?: string; data?: T };
	/** How often a worker asks for this queue's jobs (default 2 s; pg-boss allows 0.5 at least). */
	pollingIntervalSeconds?: number;
	/**
	 * How many jobs a worker takes at once (default 1); they run side by side, and a failure of one
	 * fails the batch, so a handler with a batch must be safe to run again after success.
	 */
	batchSize?: number;
	handle: (data: T) => Promise<unknown>;
};

/** Gives a job definition its data type; the queue's name is its key in registry.ts. */
export function defineJob<T extends object>(definition: JobDefinition<T>): JobDefinition<T> {
	return definition;
}

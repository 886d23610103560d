/**
 * `npm run worker`: a process that only runs background jobs (the app then runs with
 * CELLSITTER_JOBS=off and only puts jobs on the queues). scripts/worker.js loads this file.
 */
import { closeDb } from '../db';
import { serverEnv } from '../env';
import { startJobs, stopJobs } from './registry';

/** Starts the workers and schedules; resolves once the process has been asked to stop and has. */
export async function runWorker(): Promise<void> {
	serverEnv();
	await startJobs('work');
	console.log('Cellsitter worker: running background jobs (Ctrl-C stops it).');
	await new Promise<void>((resolve) => {
		const stop = (signal: NodeJS.Signals) => {
			console.log(`Cellsitter worker: ${signal}, letting running jobs finish...`);
			resolve();
		};
		process.once('SIGTERM', stop);
		process.once('SIGINT', stop);
	});
	await stopJobs();
	await closeDb();
}

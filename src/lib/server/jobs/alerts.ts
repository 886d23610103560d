/**
 * The alerts' jobs: `deliver-alert` sends one outbox row (retried with backoff, see deliver.ts),
 * `alert-clock` runs every minute (re-queue what a crash left, escalate, the clock's rules).
 */
import { deliverOne, DELIVERY_BATCH, DELIVERY_POLL_SECONDS, DELIVERY_QUEUE_OPTIONS, escalateAlerts, runAlertClock, sweepOutbox } from '../alerts/deliver';
import { defineJob } from './define';

export const deliverAlertJob = defineJob<{ deliveryId: string }>({
	options: DELIVERY_QUEUE_OPTIONS,
	pollingIntervalSeconds: DELIVERY_POLL_SECONDS,
	batchSize: DELIVERY_BATCH,
	handle: ({ deliveryId }) => deliverOne(deliveryId)
});

export const alertClockJob = defineJob<Record<string, never>>({
	options: { retryLimit: 0, expireInSeconds: 120 },
	schedule: { cron: '* * * * *' },
	handle: async () => {
		const now = new Date();
		const queued = await sweepOutbox(now);
		const escalated = await escalateAlerts(now);
		const clock = await runAlertClock(now);
		return { queued, escalated: escalated.length, ...clock };
	}
});

import { bench, describe } from 'vitest';
import { planChannels } from './plan-channels';
import { planOneAtATime } from './plan-one';
import { at, prng } from './test-support';

// 200 LFP groups of 100–300 Ah at assorted states; someone there 08:00–22:00 every day (74 days of windows).
const rnd = prng(200);
const groups = Array.from({ length: 200 }, (_, i) => ({ id: `G${i + 1}`, capacityAh: 100 + 200 * rnd(), startSoc: 0.1 + 0.8 * rnd() }));
const handsOn = Array.from({ length: 74 }, (_, day) => ({ start: at(day * 24 + 8), end: at(day * 24 + 22) }));
const channels = Array.from({ length: 8 }, (_, c) => ({ id: `ch${c + 1}`, maxAmps: 20, maxVolts: 5, maxWatts: 100 }));

describe('plans', () => {
	bench('planChannels: 200 groups on 8 channels with hands-on windows (target ≤ 5 ms)', () => {
		const r = planChannels({ chemistry: 'lfp', groups, setVolts: 3.6, start: at(8), swapMinutes: 5, handsOn, channels });
		if (!r.ok) throw new Error(r.reason);
	}, { iterations: 200, warmupIterations: 20 });

	bench('planOneAtATime: 40 groups on one supply with hands-on windows', () => {
		const r = planOneAtATime({ chemistry: 'lfp', groups: groups.slice(0, 40), setVolts: 3.6, start: at(8), swapMinutes: 5, handsOn, channel: channels[0] });
		if (!r.ok) throw new Error(r.reason);
	}, { iterations: 200, warmupIterations: 20 });
});

import { describe, expect, it } from 'vitest';
import { severityState } from './alert-screen';
import { countdownText } from './alarm';

describe('alerts on screen', () => {
	it('shows a warning as look.md’s "watch" state and a critical alert as "act now"; information has no state', () => {
		expect([severityState('warning'), severityState('critical'), severityState('info')]).toEqual(['watch', 'act-now', null]);
	});

	it('counts the alarm’s mute down in minutes and seconds, rounding up so that it never shows 0:00 early', () => {
		expect(countdownText(5 * 60_000)).toBe('5:00');
		expect(countdownText(4 * 60_000 + 5_500)).toBe('4:06');
		expect(countdownText(200)).toBe('0:01');
		expect(countdownText(-10)).toBe('0:00');
	});
});

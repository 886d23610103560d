import { describe, expect, it } from 'vitest';
import { parseIsoWithOffset, readingBatchSchema, readingInputSchema, readingPatchSchema } from './readings';

const at = (iso: string) => ({ clientId: 'c1', groupIndex: 1, takenAt: iso, volts: 3.7 });
const recent = new Date(Date.now() - 60_000).toISOString();

describe('reading times', () => {
	// Written out by hand: 21:30 at +01:00 is 20:30 UTC; 02:00 at +05:30 is 20:30 UTC the day before.
	it.each([
		['2026-03-14T21:30:00+01:00', '2026-03-14T20:30:00.000Z'],
		['2026-03-14T21:30+01:00', '2026-03-14T20:30:00.000Z'],
		['2026-03-14T20:30:00Z', '2026-03-14T20:30:00.000Z'],
		['2026-03-15T02:00:00+0530', '2026-03-14T20:30:00.000Z'],
		['2026-03-14T20:30:00.123456Z', '2026-03-14T20:30:00.123Z']
	])('%s is %s', (text, iso) => {
		expect(readingInputSchema.parse(at(text)).takenAt).toBe(iso);
		expect(new Date(parseIsoWithOffset(text)).toISOString()).toBe(iso);
	});

	it.each(['2026-03-14T21:30:00', '2026-03-14 21:30:00+01:00', '14.03.2026 21:30', '1999-12-31T23:59:59Z'])('refuses %s', (text) => {
		expect(readingInputSchema.safeParse(at(text)).success).toBe(false);
	});

	it('takes a clock up to 5 minutes ahead, not more', () => {
		expect(readingInputSchema.safeParse(at(new Date(Date.now() + 4 * 60_000).toISOString())).success).toBe(true);
		expect(readingInputSchema.safeParse(at(new Date(Date.now() + 6 * 60_000).toISOString())).success).toBe(false);
	});
});

describe('reading values', () => {
	// The bounds of the readings table's check constraints (src/lib/server/db/schema/sessions.ts).
	it.each([
		[{ groupIndex: 1, volts: 5 }, true],
		[{ groupIndex: 1, volts: 5.01 }, false],
		[{ groupIndex: null, volts: 54.6 }, true],
		[{ groupIndex: null, volts: 2000.1 }, false],
		[{ groupIndex: 0, volts: 3.7 }, false],
		[{ groupIndex: 401, volts: 3.7 }, false],
		[{ groupIndex: 1.5, volts: 3.7 }, false],
		[{ groupIndex: 1, amps: -1000 }, true],
		[{ groupIndex: 1, amps: 1000.5 }, false],
		[{ groupIndex: 1, tempC: 150 }, true],
		[{ groupIndex: 1, tempC: -41 }, false],
		[{ groupIndex: 1, ambientC: 81 }, false],
		[{ groupIndex: 1, volts: null, tempC: null }, false],
		[{ groupIndex: 1, volts: Number.NaN }, false]
	])('%o → %s', (values, ok) => {
		expect(readingInputSchema.safeParse({ clientId: 'c', takenAt: recent, ...values }).success).toBe(ok);
	});

	it('refuses control characters in a clientId or a note, keeps line breaks in a note', () => {
		expect(readingInputSchema.safeParse({ ...at(recent), clientId: 'a\u0000' }).success).toBe(false);
		expect(readingInputSchema.safeParse({ ...at(recent), note: 'x\u0007' }).success).toBe(false);
		expect(readingInputSchema.parse({ ...at(recent), note: 'warm\nleads checked' }).note).toBe('warm\nleads checked');
		expect(readingInputSchema.safeParse({ ...at(recent), clientId: '' }).success).toBe(false);
		expect(readingInputSchema.safeParse({ ...at(recent), clientId: 'x'.repeat(101) }).success).toBe(false);
	});

	it('takes 1 to 1000 readings a batch', () => {
		const one = at(recent);
		expect(readingBatchSchema.safeParse({ readings: [] }).success).toBe(false);
		expect(readingBatchSchema.safeParse({ readings: Array(1000).fill(one) }).success).toBe(true);
		expect(readingBatchSchema.safeParse({ readings: Array(1001).fill(one) }).success).toBe(false);
	});

	it('lets a PATCH name only the keys it changes (nothing is filled in)', () => {
		expect(readingPatchSchema.parse({ volts: 3.9 })).toEqual({ volts: 3.9 });
		expect(readingPatchSchema.parse({ tempC: null })).toEqual({ tempC: null });
		expect(readingPatchSchema.safeParse({}).success).toBe(false);
		expect(readingPatchSchema.safeParse({ groupIndex: 2 }).success).toBe(false);
	});
});

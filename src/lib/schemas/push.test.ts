import { describe, expect, it } from 'vitest';
import { base64urlBytes, pushSubscriptionInputSchema } from './push';

describe('base64urlBytes', () => {
	it('reads only canonical base64url', () => {
		// Worked by hand: "AQID" is 01 02 03; "_-8" is 111111 111110 111100 → ff ef.
		expect([...(base64urlBytes('AQID_-8') ?? [])]).toEqual([1, 2, 3, 255, 239]);
		// "9" is 111101: its low 2 bits would be data that 2 bytes do not have — another spelling, refused.
		expect(base64urlBytes('AQID_-9')).toBeNull();
		// Standard base64's letters.
		expect(base64urlBytes('AQID/+8')).toBeNull();
		// One character left over encodes no whole byte.
		expect(base64urlBytes('AQIDA')).toBeNull();
		expect(base64urlBytes('')).toBeNull();
	});
});

describe('pushSubscriptionInputSchema', () => {
	// 65 bytes starting 0x04 and 16 bytes: "BA" + 85 × "A" is 04 00 … 00; 22 × "A" is 16 zero bytes.
	const keys = { p256dh: `BA${'A'.repeat(85)}`, auth: 'A'.repeat(22) };

	it('takes the sizes of a P-256 key and an auth secret, and drops padding', () => {
		const parsed = pushSubscriptionInputSchema.parse({ endpoint: 'https://push.example/x', keys: { p256dh: `${keys.p256dh}=`, auth: `${keys.auth}==` } });
		expect(parsed.keys).toEqual(keys);
		expect(parsed.label).toBeUndefined();
	});

	it('refuses a key of another size or kind, and endpoints that are not https', () => {
		const bad = [
			{ endpoint: 'https://push.example/x', keys: { ...keys, p256dh: `BA${'A'.repeat(84)}` } },
			{ endpoint: 'https://push.example/x', keys: { ...keys, p256dh: `Ag${'A'.repeat(85)}` } }, // first byte 0x02
			{ endpoint: 'https://push.example/x', keys: { ...keys, auth: 'A'.repeat(23) } },
			{ endpoint: 'http://push.example/x', keys },
			{ endpoint: 'HTTPS://push.example/x', keys },
			{ endpoint: 'https://push.example/x', keys, label: 'tab\there' }
		];
		for (const body of bad) expect(pushSubscriptionInputSchema.safeParse(body).success, JSON.stringify(body)).toBe(false);
	});
});

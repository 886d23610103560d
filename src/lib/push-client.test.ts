import { describe, expect, it } from 'vitest';
import { deviceLabel, isAppleMobile, urlBase64ToUint8Array } from './push-client';

// User-agent strings as those browsers send them (copied from the browsers, versions vary).
const UA = {
	androidChrome: 'Mozilla/5.0 (Linux; Android 14; Pixel 7) AppleWebKit/537.36 (KHTML, like Gecko) Chrome/131.0.0.0 Mobile Safari/537.36',
	androidFirefox: 'Mozilla/5.0 (Android 14; Mobile; rv:133.0) Gecko/133.0 Firefox/133.0',
	samsung: 'Mozilla/5.0 (Linux; Android 14; SM-S911B) AppleWebKit/537.36 (KHTML, like Gecko) SamsungBrowser/26.0 Chrome/122.0.0.0 Mobile Safari/537.36',
	iphoneSafari: 'Mozilla/5.0 (iPhone; CPU iPhone OS 17_4 like Mac OS X) AppleWebKit/605.1.15 (KHTML, like Gecko) Version/17.4 Mobile/15E148 Safari/604.1',
	ipadAsMac: 'Mozilla/5.0 (Macintosh; Intel Mac OS X 10_15_7) AppleWebKit/605.1.15 (KHTML, like Gecko) Version/17.4 Safari/605.1.15',
	windowsEdge: 'Mozilla/5.0 (Windows NT 10.0; Win64; x64) AppleWebKit/537.36 (KHTML, like Gecko) Chrome/131.0.0.0 Safari/537.36 Edg/131.0.0.0'
};

describe('urlBase64ToUint8Array', () => {
	it('reads base64url without padding', () => {
		// Worked by hand: "AQID" is 01 02 03; "_-8" is 111111 111110 111100 → ff ef (2 low bits unused).
		expect([...urlBase64ToUint8Array('AQID_-8')]).toEqual([1, 2, 3, 255, 239]);
	});
});

describe('deviceLabel and isAppleMobile', () => {
	it('names the browser and the system', () => {
		expect(deviceLabel(UA.androidChrome)).toBe('Chrome on Android');
		expect(deviceLabel(UA.androidFirefox)).toBe('Firefox on Android');
		expect(deviceLabel(UA.samsung)).toBe('Samsung Internet on Android');
		expect(deviceLabel(UA.iphoneSafari)).toBe('Safari on iPhone');
		expect(deviceLabel(UA.windowsEdge)).toBe('Edge on Windows');
		// iPadOS asks for desktop pages as a Mac; only the touch screen tells it apart.
		expect(deviceLabel(UA.ipadAsMac, 5)).toBe('Safari on iPad');
		expect(deviceLabel(UA.ipadAsMac, 0)).toBe('Safari on Mac');
	});

	it('knows iPhones and iPads, also an iPad that presents itself as a Mac', () => {
		expect(isAppleMobile(UA.iphoneSafari, 5)).toBe(true);
		expect(isAppleMobile(UA.ipadAsMac, 5)).toBe(true);
		expect(isAppleMobile(UA.ipadAsMac, 0)).toBe(false);
		expect(isAppleMobile(UA.androidChrome, 5)).toBe(false);
	});
});

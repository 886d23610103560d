/** How a charger channel's limits read on screen (client-safe). */
import type { ChargerKind } from '$lib/schemas/chargers';

export type ChannelLimits = {
	maxVolts: number;
	maxAmps: number;
	maxWatts?: number | null;
	balanceAmps?: number | null;
	maxSeriesCells?: number | null;
};

/** A limit as the maker states it: 30 stays "30", 26.1 stays "26.1" (no padding to fixed decimals). */
export function asStated(value: number): string {
	return String(Number(value.toPrecision(6)));
}

/**
 * "0–30 V · 5 A · 150 W" for an adjustable supply; a pack charger's voltage is its one set
 * point ("54.6 V"); a hobby charger goes "up to" its limit per channel.
 */
export function channelLimitsText(channel: ChannelLimits, kind: ChargerKind): string {
	const volts = asStated(channel.maxVolts);
	const parts = [
		kind === 'bench-supply' ? `0–${volts} V` : kind === 'multi-channel' ? `up to ${volts} V` : `${volts} V`,
		`${asStated(channel.maxAmps)} A`
	];
	if (channel.maxWatts) parts.push(`${asStated(channel.maxWatts)} W`);
	return parts.join(' · ');
}

/** "balance 0.3 A · up to 6S", or '' when the channel has neither. */
export function channelExtrasText(channel: ChannelLimits): string {
	const parts: string[] = [];
	if (channel.balanceAmps) parts.push(`balance ${asStated(channel.balanceAmps)} A`);
	if (channel.maxSeriesCells) parts.push(`up to ${channel.maxSeriesCells}S`);
	return parts.join(' · ');
}

/**
 * What a kind of charger does when a charge ends, where that needs saying beside its channels; null
 * when its own charge termination ends the charge. A bench supply has no end of charge at all: in CV
 * it holds the group at the set voltage for as long as it stays connected. "Unplug when done" is the
 * U.S. CPSC's advice (references.md §8).
 */
export function chargeEndCaution(kind: ChargerKind): string | null {
	if (kind === 'bench-supply') {
		return 'A bench supply does not stop by itself at the end of a charge: it keeps holding the group at the set voltage until someone disconnects it. Be at the bench when each step ends, and disconnect the group or switch the supply off then.';
	}
	if (kind === 'pack-charger') {
		return 'Check in its manual whether it switches off when the pack is full; some keep holding the pack at their set voltage. Unplug it when the charge is done.';
	}
	return null;
}

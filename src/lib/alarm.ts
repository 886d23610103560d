/**
 * The run screen's alarm: beeps made by a WebAudio oscillator (no sound files), while a critical
 * alert of the session needs attention. It can be muted for 5 minutes, never switched off; a
 * critical alert that was not there when it was muted sounds it again at once.
 *
 * Browsers keep an AudioContext suspended until the person has touched the page: `state` says so,
 * and the screen offers a button whose tap calls `resume`.
 */

export const ALARM_MUTE_MS = 5 * 60_000;

/** Three rising beeps, then a pause: every 2 s. */
const PATTERN_MS = 2000;
const BEEPS = [880, 988, 1175];
const BEEP_S = 0.16;
const GAP_S = 0.08;

export type AlarmState = 'running' | 'suspended' | 'closed' | 'unsupported';

export type Alarm = {
	state(): AlarmState;
	/** Call from a tap: lets the sound play. True when it may. */
	resume(): Promise<boolean>;
	/** No beeps until then (ms since the epoch); 0 to sound again. */
	muteUntil(until: number): void;
	stop(): void;
};

type AudioContextClass = typeof AudioContext;

/** Starts beeping (when the browser lets it); `onState` hears every change of the audio's state. */
export function startAlarm(onState: (state: AlarmState) => void): Alarm | null {
	const Context: AudioContextClass | undefined =
		globalThis.AudioContext ?? (globalThis as unknown as { webkitAudioContext?: AudioContextClass }).webkitAudioContext;
	if (!Context) return null;
	let ctx: AudioContext;
	try {
		ctx = new Context();
	} catch {
		return null; // too many audio contexts, or audio switched off by policy
	}
	let mutedUntil = 0;

	const beep = () => {
		if (ctx.state !== 'running' || Date.now() < mutedUntil) return;
		let t = ctx.currentTime + 0.02;
		for (const hz of BEEPS) {
			const osc = ctx.createOscillator();
			const gain = ctx.createGain();
			osc.type = 'square';
			osc.frequency.value = hz;
			// A short ramp in and out: no click at the edges.
			gain.gain.setValueAtTime(0.0001, t);
			gain.gain.exponentialRampToValueAtTime(0.25, t + 0.01);
			gain.gain.exponentialRampToValueAtTime(0.0001, t + BEEP_S);
			osc.connect(gain).connect(ctx.destination);
			osc.start(t);
			osc.stop(t + BEEP_S + 0.01);
			t += BEEP_S + GAP_S;
		}
		navigator.vibrate?.([200, 100, 200]);
	};

	const timer = setInterval(beep, PATTERN_MS);
	ctx.onstatechange = () => {
		onState(ctx.state as AlarmState);
		beep();
	};
	beep();

	return {
		state: () => ctx.state as AlarmState,
		resume: async () => {
			try {
				await ctx.resume();
			} catch {
				// still blocked: the button stays
			}
			return ctx.state === 'running';
		},
		muteUntil: (until) => {
			const wasMuted = Date.now() < mutedUntil;
			mutedUntil = until;
			if (wasMuted && until <= Date.now()) beep();
		},
		stop: () => {
			clearInterval(timer);
			ctx.onstatechange = null;
			void ctx.close().catch(() => {});
		}
	};
}

/** "4:05" for a countdown of ms. */
export function countdownText(ms: number): string {
	const s = Math.max(0, Math.ceil(ms / 1000));
	return `${Math.floor(s / 60)}:${String(s % 60).padStart(2, '0')}`;
}

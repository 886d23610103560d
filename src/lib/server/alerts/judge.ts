/**
 * Judging a session's readings right after they are stored, once for all the posts that arrive
 * together. A logger posting hundreds of readings a second to one session would otherwise pay a
 * whole judgement (the session, its steps, the newest readings of every group, the rules) per post;
 * here the posts that commit while a judgement runs share the next one, whose transaction starts
 * after their commits, so it sees their readings. Each caller's promise settles when a judgement
 * that saw its readings has committed and its deliveries are queued.
 *
 * What a crash between a post's commit and its judgement leaves is judged later: a client that got
 * no answer sends its readings again (same client ids), and a repeat is judged too; the alert clock
 * judges every running session's readings each minute (deliver.ts, runAlertClock). A judgement
 * first reads in one statement whether anything would change (readingsUnchanged: usually not) and
 * only then judges under the session's row lock, so judgements that write never overlap, in this
 * process or across instances.
 */
import { db, prepared } from '../db';
import { afterCommit } from './deliver';
import { evaluateReadingsInTx, readingsUnchanged } from './raise';

type Slot = { running: boolean; waiting: (() => void)[] };
const slots = new Map<string, Slot>();

/** Judges the session's newest readings (after the caller's commit); shared with concurrent callers. */
export function judgeSession(sessionId: string): Promise<void> {
	return new Promise<void>((resolve) => {
		let slot = slots.get(sessionId);
		if (!slot) {
			slot = { running: false, waiting: [] };
			slots.set(sessionId, slot);
		}
		slot.waiting.push(resolve);
		if (!slot.running) void drain(sessionId, slot);
	});
}

async function drain(sessionId: string, slot: Slot): Promise<void> {
	slot.running = true;
	try {
		while (slot.waiting.length > 0) {
			// Everyone waiting now committed before this judgement's transaction begins.
			const served = slot.waiting.splice(0);
			try {
				// Most judgements change nothing: one statement tells. Otherwise under the row lock.
				if (!(await readingsUnchanged(prepared, sessionId))) {
					const changes = await db.transaction((tx) => evaluateReadingsInTx(tx, sessionId));
					await afterCommit(changes);
				}
			} catch (e) {
				// The readings are stored; the alert clock judges them again within a minute.
				console.error(`Readings of session ${sessionId} could not be judged now; the alert clock will.`, e);
			}
			for (const done of served) done();
		}
	} finally {
		slot.running = false;
		slots.delete(sessionId);
	}
}

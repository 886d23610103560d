// In-memory store of every message the fake SMTP server accepted.
import { randomUUID } from 'node:crypto';
import { bareAddress } from './mail-parse.js';

/**
 * What `GET /messages` returns, newest first. `to` holds the envelope recipients
 * (so Bcc counts); `text` / `html` are '' when the message had no such part.
 * @typedef {{
 *   id: string,
 *   from: string,
 *   to: string[],
 *   subject: string,
 *   text: string,
 *   html: string,
 *   receivedAt: string,
 *   headerTo: string[],
 *   attachments: import('./mail-parse.js').AttachmentInfo[]
 * }} StoredMessage
 */

/** Old messages are dropped beyond this, so a long `npm start` session cannot grow without end. */
const MAX_MESSAGES = 1000;

export class Mailbox {
	/** @type {StoredMessage[]} newest first */
	#messages = [];

	/**
	 * @param {Omit<StoredMessage, 'id' | 'receivedAt'>} message
	 * @returns {StoredMessage}
	 */
	add(message) {
		const stored = { id: randomUUID(), receivedAt: new Date().toISOString(), ...message };
		this.#messages.unshift(stored);
		this.#messages.length = Math.min(this.#messages.length, MAX_MESSAGES);
		return stored;
	}

	/**
	 * @param {string | null} [to] only messages to this address (case-insensitive)
	 */
	list(to) {
		if (!to) return [...this.#messages];
		const wanted = bareAddress(to);
		return this.#messages.filter((m) => m.to.some((address) => bareAddress(address) === wanted));
	}

	/** @param {string} id */
	get(id) {
		return this.#messages.find((m) => m.id === id) ?? null;
	}

	clear() {
		this.#messages = [];
	}
}

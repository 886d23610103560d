// In-memory store of every message the fake SMTP server accepted.
import { randomUUID } from 'node:crypto';

/**
 * What `GET /messages` returns, newest first. `to` holds the envelope recipients
 * (so Bcc counts); `text` / `html` are '' when the message had no such part.
 * @typedef {{
 *   id: string,
 *   from: string,
 *   to: string[],
 *   subject: string,
 *   messageId: string,
 *   text: string,
 *   html: string,
 *   receivedAt: string,
 *   headerTo: string[],
 *   attachments: AttachmentInfo[]
 * }} StoredMessage
 * @typedef {{ filename: string | null, contentType: string, size: number }} AttachmentInfo
 */

/**
 * The address out of `Name <a@b>` (or a bare address), lower-cased.
 * @param {string} value
 */
function bareAddress(value) {
	const angle = /<([^>]*)>/.exec(value);
	return (angle ? angle[1] : value).trim().toLowerCase();
}

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

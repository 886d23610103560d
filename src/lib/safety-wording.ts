/**
 * A check for our own wording (landing page, demo notes): a sentence that speaks of charging at night,
 * asleep or unattended must also say that someone stays awake and present, or forbid it. Fire services
 * advise never to charge while asleep or away (references.md §8).
 */
const risky = /\b(overnight|night|asleep|while (?:you|they|we) sleep|unattended|unwatched|walk away|while you are away)\b/i;
const guarded = /\b(awake|on watch|night watch|present|stay with|never|nobody is there|no one is there)\b/i;

/** The sentences of `text` that mention a night or unattended charge without someone awake and present. */
export function unwatchedChargeSentences(text: string): string[] {
	return text
		.replace(/\s+/g, ' ')
		.split(/(?<=[.!?])\s+/)
		.filter((sentence) => risky.test(sentence) && !guarded.test(sentence));
}

/**
 * Text fields that cross a boundary. PostgreSQL cannot store NUL (U+0000) in text, and control
 * characters in a name or label are never meant; so every text schema refuses them here, with a
 * plain message, before anything reaches the database. Line breaks and tabs stay allowed in
 * multi-line text (notes).
 */
import { z } from 'zod';

// C0 controls and DEL, plus C1 controls. Single-line text refuses them all.
const controlInLine = /[\u0000-\u001f\u007f-\u009f]/;
// Multi-line text allows tab (U+0009), line feed (U+000A) and carriage return (U+000D).
const controlInNotes = /[\u0000-\u0008\u000b\u000c\u000e-\u001f\u007f-\u009f]/;

/** True when the text holds a character that no single-line field accepts. */
export function hasControlCharacter(text: string, multiLine = false): boolean {
	return (multiLine ? controlInNotes : controlInLine).test(text);
}

const lineMessage = 'Use letters, digits and punctuation only (no control characters).';
const notesMessage = 'Remove the control characters (only line breaks and tabs are allowed).';

type TextOptions = {
	/** The message for an empty value; without it an empty text is allowed. */
	required?: string;
	tooLong?: string;
};

function limited(max: number, options: TextOptions) {
	const base = z.string().max(max, options.tooLong ?? `Use at most ${max} characters.`);
	return options.required ? base.min(1, options.required) : base;
}

/** A single-line text: trimmed, no control characters, at most `max` characters. */
export function lineText(max: number, options: TextOptions = {}) {
	return z
		.string()
		.refine((v) => !hasControlCharacter(v), lineMessage)
		.transform((v) => v.trim())
		.pipe(limited(max, options));
}

/** Multi-line text (notes): trimmed, line breaks and tabs allowed, other controls refused. */
export function notesText(max: number, options: TextOptions = {}) {
	return z
		.string()
		.refine((v) => !hasControlCharacter(v, true), notesMessage)
		.transform((v) => v.trim())
		.pipe(limited(max, options));
}

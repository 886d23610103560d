import { describe, expect, it } from 'vitest';
import { lineText, notesText } from './text';

describe('text fields refuse control characters', () => {
	it.each([
		['NUL', 'pack\u0000one'],
		['line feed', 'pack\none'],
		['carriage return', 'pack\rone'],
		['tab', 'pack\tone'],
		['escape', 'pack\u001bone'],
		['DEL', 'pack\u007fone'],
		['C1 control', 'pack\u0085one']
	])('a line with %s is refused', (_, value) => {
		const r = lineText(80).safeParse(value);
		expect(r.success).toBe(false);
		if (!r.success) expect(r.error.issues[0].message).toMatch(/control characters/);
	});

	it('a line with accents, symbols and emoji is kept, trimmed', () => {
		expect(lineText(80).parse('  Zellen 18650 – Ω ⚡ 🔋 ')).toBe('Zellen 18650 – Ω ⚡ 🔋');
	});

	it('notes keep line breaks and tabs but refuse NUL and other controls', () => {
		expect(notesText(500).parse('line one\r\nline two\tand a tab')).toBe('line one\r\nline two\tand a tab');
		expect(notesText(500).safeParse('a\u0000b').success).toBe(false);
		expect(notesText(500).safeParse('a\u000bb').success).toBe(false);
	});

	it('a required text refuses blanks with its own message', () => {
		const r = lineText(80, { required: 'Name the pack.' }).safeParse('   ');
		expect(r.success).toBe(false);
		if (!r.success) expect(r.error.issues[0].message).toBe('Name the pack.');
	});

	it('length is counted after trimming', () => {
		expect(lineText(3).safeParse('  abc  ').success).toBe(true);
		expect(lineText(3).safeParse('abcd').success).toBe(false);
	});
});

/**
 * The columns of a cell CSV: which header names mean which column (with the unit they imply), the
 * units a value may carry, and the decimal numbers the file may hold.
 */
/** The template's column names: how messages name a column, whatever alias the file used. */
export type CellCsvColumn = 'label' | 'volts' | 'resistance_mohm' | 'capacity_ah';

/** How a message names a column's value: plain words with the unit, never the header's code. */
export const columnWords: Record<CellCsvColumn, { name: string; unit: string }> = {
	label: { name: 'label', unit: '' },
	volts: { name: 'voltage', unit: 'volts' },
	resistance_mohm: { name: 'resistance', unit: 'milliohms' },
	capacity_ah: { name: 'capacity', unit: 'amp-hours' }
};

export interface ColumnSpec {
	column: CellCsvColumn;
	/** Multiplier to the template's unit (mAh → Ah). */
	scale: number;
}

const columnAliases: [ColumnSpec, string[]][] = [
	[{ column: 'label', scale: 1 }, ['label', 'cell', 'cell_label', 'cell_id', 'cell_name', 'id', 'name']],
	[
		{ column: 'volts', scale: 1 },
		['volts', 'volt', 'voltage', 'v', 'volts_v', 'voltage_v', 'arrival_volts', 'arrival_voltage']
	],
	[
		{ column: 'resistance_mohm', scale: 1 },
		[
			'resistance_mohm',
			'resistance',
			'resistance_milliohm',
			'resistance_milliohms',
			'ir',
			'ir_mohm',
			'internal_resistance',
			'internal_resistance_mohm',
			'mohm'
		]
	],
	[{ column: 'capacity_ah', scale: 1 }, ['capacity_ah', 'capacity', 'ah', 'measured_capacity_ah']],
	// Cell testers usually report mAh; reading such a column as Ah would be off by a thousand.
	[{ column: 'capacity_ah', scale: 0.001 }, ['capacity_mah', 'mah', 'measured_capacity_mah']]
];

const columnByHeader = new Map<string, ColumnSpec>(
	columnAliases.flatMap(([spec, names]) => names.map((name): [string, ColumnSpec] => [name, spec]))
);

/** "Resistance (mΩ)" → "resistance_mohm"; the ohm sign, Greek capital omega and its lower case all read as "ohm". */
function headerKey(name: string): string {
	return name
		.trim()
		.toLowerCase()
		.replace(/[\u03a9\u03c9\u2126]/g, 'ohm')
		.replace(/[^a-z0-9]+/g, '_')
		.replace(/^_+|_+$/g, '');
}

/** A trailing unit the value may carry ("3.61 V", "18 mΩ"), by column and scale. */
export function unitPattern(spec: ColumnSpec): RegExp {
	if (spec.column === 'volts') return /\s*v$/i;
	if (spec.column === 'resistance_mohm') return /\s*m(?:ohm|[\u03a9\u03c9\u2126])$/i;
	return spec.scale === 1 ? /\s*ah$/i : /\s*mah$/i;
}

const decimalPattern = /^[+-]?(?:\d+(?:[.,]\d*)?|[.,]\d+)$/;

/** A number with a decimal point or a decimal comma ("3.612", "3,612"); null when it is not one. No thousands separators. */
export function parseDecimal(text: string): number | null {
	const trimmed = text.trim();
	return decimalPattern.test(trimmed) ? Number(trimmed.replace(',', '.')) : null;
}

export interface ColumnMap {
	width: number;
	indexes: Map<CellCsvColumn, { index: number; spec: ColumnSpec }>;
	ignored: string[];
}

/** Reads the header row: every needed column once, or a message saying what is wrong. */
export function mapHeader(fields: string[]): { map: ColumnMap } | { message: string } {
	const indexes: ColumnMap['indexes'] = new Map();
	const ignored: string[] = [];
	for (const [index, raw] of fields.entries()) {
		const name = raw.trim();
		if (name === '') continue;
		const spec = columnByHeader.get(headerKey(name));
		if (!spec) {
			ignored.push(name);
			continue;
		}
		const earlier = indexes.get(spec.column);
		if (earlier)
			return {
				message: `The header row has two ${columnWords[spec.column].name} columns ("${fields[earlier.index].trim()}" and "${name}"). Keep one of them.`
			};
		indexes.set(spec.column, { index, spec });
	}
	const missing = (['label', 'volts'] as const).filter((c) => !indexes.has(c));
	if (missing.length > 0) {
		const named = fields.map((f) => f.trim()).filter((f) => f !== '');
		const found = named.length ? `It names: ${named.slice(0, 8).map((f) => `"${f}"`).join(', ')}.` : 'It is empty.';
		return {
			message:
				`The header row needs a ${missing.join(' and a ')} column. ${found} ` +
				'The first row must name the columns, as in the template: label, volts, resistance_mohm, capacity_ah.'
		};
	}
	return { map: { width: fields.length, indexes, ignored } };
}

/** Which header names were read as which column, and which were not read at all (for the preview). */
export function describeHeader(fields: string[]): { columns: Partial<Record<CellCsvColumn, string>>; ignored: string[] } {
	const columns: Partial<Record<CellCsvColumn, string>> = {};
	const ignored: string[] = [];
	for (const raw of fields) {
		const name = raw.trim();
		if (name === '') continue;
		const spec = columnByHeader.get(headerKey(name));
		if (spec && !columns[spec.column]) columns[spec.column] = name;
		else ignored.push(name);
	}
	return { columns, ignored };
}

import { readdirSync, readFileSync } from 'node:fs';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import * as engine from './index';

const dir = import.meta.dirname;
const sources = readdirSync(dir).filter((f) => f.endsWith('.ts') && !f.endsWith('.test.ts') && !f.endsWith('.bench.ts') && f !== 'test-support.ts');

describe('engine public API and house rules', () => {
	it('exports every name issue 3 lists', () => {
		for (const name of [
			'chemistries',
			'socFromRestVoltage',
			'restVoltageFromSoc',
			'chargeAmps',
			'estimateCharge',
			'reestimate',
			'scheduleLongestFirst',
			'partitionEqualCount',
			'planOneAtATime',
			'planChannels',
			'planBulk',
			'planBleed',
			'defaultLimits',
			'evaluateReadings',
			'checkClock',
			'inspectCells',
			'matchCells',
			'packRatings'
		]) {
			expect(engine, name).toHaveProperty(name);
		}
		expect(Object.keys(engine.chemistries).sort()).toEqual(['lco', 'lfp', 'lmo', 'lto', 'nca', 'nmc']);
	});

	it.each(sources)('%s: no framework or node imports, no clock, no randomness, no notion of users', (file) => {
		const text = readFileSync(join(dir, file), 'utf8');
		const code = text.replace(/\/\*[\s\S]*?\*\//g, '').replace(/\/\/.*$/gm, '');
		expect(text).not.toMatch(/from ['"](svelte|@sveltejs\/kit|drizzle-orm|zod|node:|fs|path)/);
		expect(code).not.toMatch(/Date\.now\(|Math\.random\(|new Date\(\)/);
		expect(code).not.toMatch(/\b(user|member|role|permission|workshop)\w*/i);
	});
});

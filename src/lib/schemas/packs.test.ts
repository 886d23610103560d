import { describe, expect, it } from 'vitest';
import { packPatchSchema, packSchema } from './packs';

describe('pack schemas', () => {
	it('a PATCH keeps exactly the keys sent: no default fills in what was left out', () => {
		expect(packPatchSchema.parse({ parallel: 3 })).toEqual({ parallel: 3 });
		expect(packPatchSchema.parse({ notes: '  Fuse 80 A.  ' })).toEqual({ notes: 'Fuse 80 A.' });
		expect(packPatchSchema.parse({})).toEqual({});
	});

	it('a new pack still takes the defaults for what it leaves out', () => {
		const parsed = packSchema.parse({ name: 'Kart', cellSpecId: 'a'.repeat(24), series: 4, parallel: 2 });
		expect(parsed).toEqual({
			name: 'Kart',
			cellSpecId: 'a'.repeat(24),
			series: 4,
			parallel: 2,
			bmsFitted: false,
			bmsBalanceAmps: null,
			status: 'planning',
			packOwnerId: '',
			measuredPeakAmps: null,
			measuredPeakNote: '',
			notes: ''
		});
	});

	it('refuses an owner or a cell spec that is not an id', () => {
		expect(packPatchSchema.safeParse({ packOwnerId: 'x\u0000' }).success).toBe(false);
		expect(packPatchSchema.safeParse({ cellSpecId: '../x' }).success).toBe(false);
		expect(packPatchSchema.parse({ packOwnerId: '' })).toEqual({ packOwnerId: '' });
	});
});

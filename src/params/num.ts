import type { ParamMatcher } from '@sveltejs/kit';

/** A row number from an identity column (readings): a positive whole number JavaScript holds exactly. */
export const match: ParamMatcher = (param) => /^[1-9]\d{0,14}$/.test(param);

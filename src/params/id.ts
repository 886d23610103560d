import type { ParamMatcher } from '@sveltejs/kit';

/** A record id as newId() makes them: 24 base32 characters, lower case. */
export const match: ParamMatcher = (param) => /^[a-z2-7]{24}$/.test(param);

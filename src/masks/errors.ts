/**
 * The mask stage's errors. A `MaskError` names what was refused and what was expected: a
 * vocabulary that cannot spell a byte the grammar needs, or a token that is not allowed in a state.
 */
export class MaskError extends Error {}

/** The parser's nesting guard lives with the other limits in src/util (the description notation uses it too). */
export { guardedMatch, nestingProblem, NestingLimit, GUARD_INSTALLED } from '../util/ohm-depth.ts';

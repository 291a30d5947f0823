/**
 * The located check pass after a successful parse: names of bound name sets must be members, and
 * `bound` fields must name a variable an enclosing `binds` field introduced.
 */
import type { NameBindings, Span } from '../description/ir.ts';
import type { GrammarInfo } from './info.ts';
import { ParseError } from './parse-errors.ts';
import type { Ctx } from './parse-build.ts';
import type { Tree, TreeValue } from './validate.ts';

/** Names (when bound) and variable scoping, with locations. */
export function checkParsed(info: GrammarInfo, tree: Tree, names: NameBindings | undefined, ctx: Ctx): void {
  const visit = (node: Tree, scope: readonly string[]): void => {
    const c = info.ctor.get(node.kind)!;
    const spans = ctx.spans.get(node);
    let inScope = scope;
    for (const f of c.fields) {
      const v = node[f.name];
      const values = Array.isArray(v) ? (v as TreeValue[]) : v === null ? [] : [v];
      const s = spans?.get(f.name);
      const spanAt = (i: number): Span => (Array.isArray(s) ? s[i]! : (s as Span));
      values.forEach((x, i) => {
        if (f.type.kind === 'sort') visit(x as Tree, inScope);
        else if (f.type.kind === 'names') {
          const members = names?.[f.type.name];
          if (members !== undefined && !members.includes(x as string)) {
            throw new ParseError(ctx.file, ctx.text, spanAt(i), `unknown name '${String(x)}' for ${f.type.name}`);
          }
        } else if (f.scoping === 'bound' && !inScope.includes(x as string)) {
          throw new ParseError(ctx.file, ctx.text, spanAt(i), `unbound variable '${String(x)}'`);
        }
      });
      if (f.scoping === 'binds') inScope = inScope.concat(values as string[]);
    }
  };
  visit(tree, []);
}

/**
 * The JSON tree node, the one `Tree` type of the project: `{"kind": CONSTRUCTOR, FIELD: VALUE, ...}`
 * (validate.ts checks a value against a grammar; every other stage imports the type from here
 * through the tree stage's index).
 */
export type TreeValue = Tree | string | number | null | readonly TreeValue[];
export interface Tree {
  readonly kind: string;
  readonly [field: string]: TreeValue;
}

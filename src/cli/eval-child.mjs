// Entry of one local worker process of `treewright evaluate --workers N`: registers the TypeScript
// loader (tsx), as treewright.mjs does, then serves jobs (eval-child.ts).
import { register } from 'tsx/esm/api';
register();
await import('./eval-child.ts');

// Entry of the compile worker threads: registers the TypeScript loader (tsx) in this thread,
// as src/cli/treewright.mjs does for the main one, then loads the worker (compile-worker.ts).
import { register } from 'tsx/esm/api';
register();
await import('./compile-worker.ts');

// Entry of the /api/check worker thread: registers the TypeScript loader (tsx) in this thread,
// as src/cli/treewright.mjs does for the main one, then loads the worker (check-worker.ts).
import { register } from 'tsx/esm/api';
register();
await import('./check-worker.ts');

#!/usr/bin/env node
// Entry shim for the `treewright` command: registers the TypeScript loader (tsx) so the
// sources run without a build step, then hands over to main.ts.
import { register } from 'tsx/esm/api';
register();
const { main } = await import('./main.ts');
process.exitCode = await main(process.argv.slice(2));

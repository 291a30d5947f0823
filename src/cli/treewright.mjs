#!/usr/bin/env node
// Development entry of the `treewright` command: registers the TypeScript loader (tsx) so the
// sources run without a build step, then hands over to main.ts. The package's `bin` is the
// compiled dist/cli/bin.js (src/cli/bin.ts).
import { register } from 'tsx/esm/api';
register();
const { main } = await import('./main.ts');
process.exitCode = await main(process.argv.slice(2));

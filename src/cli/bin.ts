#!/usr/bin/env node
// The `treewright` command of the compiled package (dist/cli/bin.js). From the sources, use
// src/cli/treewright.mjs, which runs the same main() through the TypeScript loader.
import { main } from './main.ts';

process.exitCode = await main(process.argv.slice(2));

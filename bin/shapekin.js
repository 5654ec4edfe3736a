#!/usr/bin/env node
// Runs the TypeScript command line through tsx (a dependency), so `npx shapekin` needs no build step.
import { register } from 'tsx/esm/api';

register();
const { main } = await import('../src/cli/main.ts');
process.exitCode = await main(process.argv.slice(2));

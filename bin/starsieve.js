#!/usr/bin/env node
// Runs the TypeScript sources directly through tsx, so a clone needs only `npm ci`, no build step.
import { register } from 'tsx/esm/api';

register();
const { main } = await import('../cli/main.ts');
process.exitCode = await main(process.argv.slice(2));

#!/usr/bin/env node
// Runs the TypeScript CLI through tsx's loader (installed as a dependency).
import { register } from 'tsx/esm/api';

register();
const { main } = await import('../src/cli/main.ts');
process.exitCode = await main(process.argv.slice(2));

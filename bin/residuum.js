#!/usr/bin/env node
// Entry point for `npx residuum` and `npm start`: registers the TypeScript loader, then runs the CLI.
import { register } from 'tsx/esm/api';

register();
const { main } = await import('../src/cli.ts');
process.exitCode = await main(process.argv.slice(2));

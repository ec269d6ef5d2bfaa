#!/usr/bin/env node
// Entry point for `npx residuum` and `npm start`: registers the TypeScript loader, then runs the CLI.
import { register } from 'tsx/esm/api';

register();
// A closed pipe (`residuum export … | head`) ends the output quietly, as command-line tools do.
process.stdout.on('error', (error) => {
  if (error.code === 'EPIPE') process.exit(0);
  throw error;
});
const { main } = await import('../src/cli.ts');
process.exitCode = await main(process.argv.slice(2));

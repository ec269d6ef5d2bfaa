import { collectCommand, collectUsage } from './commands/collect.ts';
import { countCommand, countUsage } from './commands/count.ts';
import { demoCommand, demoUsage } from './commands/demo.ts';
import { evaluateCommand, evaluateUsage } from './commands/evaluate.ts';
import { exportCommand, exportUsage } from './commands/export.ts';
import { learnCommand, learnUsage } from './commands/learn.ts';
import { runCommand, runUsage } from './commands/run.ts';
import { readFileSync } from 'node:fs';
import { UsageError } from './commands/args.ts';

/** The version of this program, from package.json. */
export const VERSION = (JSON.parse(readFileSync(new URL('../package.json', import.meta.url), 'utf8')) as { version: string }).version;

const commands: Record<string, { run: (argv: string[]) => Promise<number>; usage: string; summary: string }> = {
  learn: { run: learnCommand, usage: learnUsage, summary: 'learn the empty scene from frames with nobody in them' },
  count: { run: countCommand, usage: countUsage, summary: 'count people and shelf fill per zone in each frame' },
  run: { run: runCommand, usage: runUsage, summary: 'run the counting service for the configured cameras' },
  evaluate: { run: evaluateCommand, usage: evaluateUsage, summary: 'compare counts and masks with ground truth, optionally against a baseline' },
  export: { run: exportCommand, usage: exportUsage, summary: 'write the hourly CSV of stored counts' },
  collect: { run: collectCommand, usage: collectUsage, summary: 'collect counts published over MQTT by many sites into one database' },
  demo: { run: demoCommand, usage: demoUsage, summary: 'run the synthetic demo scenario with the dashboard (npm start)' },
};

const overview = `Residuum counts people per zone of a room, and fill per shelf section, from an ordinary camera,
without storing any image of people.

Usage: residuum <command> [options]        residuum <command> --help        residuum --version

Commands:
${Object.entries(commands).map(([name, c]) => `  ${name.padEnd(8)} ${c.summary}`).join('\n')}
`;

/** Runs one command line; returns the process exit code (0 ok, 1 failed, 2 wrong usage). */
export async function main(argv: string[]): Promise<number> {
  const [name, ...rest] = argv;
  if (name === undefined || name === 'help' || name === '--help' || name === '-h') {
    process.stdout.write(overview);
    return name === undefined ? 2 : 0;
  }
  if (name === '--version' || name === '-V' || name === 'version') {
    process.stdout.write(`residuum ${VERSION}\n`);
    return 0;
  }
  const command = commands[name];
  if (!command) {
    process.stderr.write(`residuum: no command "${name}"\n\n${overview}`);
    return 2;
  }
  if (rest.includes('--help') || rest.includes('-h')) {
    process.stdout.write(`${command.usage}\n`);
    return 0;
  }
  try {
    return await command.run(rest);
  } catch (error) {
    if (error instanceof UsageError) {
      process.stderr.write(`residuum ${name}: ${error.message}\n\n${command.usage}\n`);
      return 2;
    }
    const e = error as Error;
    // Known errors carry a message that names the file or field; anything else gets its stack.
    const known = ['FrameError', 'ModelFileError', 'ZoneError', 'ConfigError', 'RangeError', 'UsageError'].includes(e.name);
    process.stderr.write(`residuum ${name}: ${known ? e.message : (e.stack ?? String(e))}\n`);
    return 1;
  }
}

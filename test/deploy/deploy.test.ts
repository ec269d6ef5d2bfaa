import { spawnSync } from 'node:child_process';
import { existsSync, readFileSync } from 'node:fs';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { main } from '../../src/cli.ts';

/**
 * The service definitions in deploy/: what can be checked without installing them. The systemd
 * units go through `systemd-analyze verify` where it is installed (it parses every directive and
 * checks the executable); the container definition is read instruction by instruction (no image
 * can be built here: no registry of base images is reachable).
 */

const root = join(import.meta.dirname, '..', '..');
const read = (file: string) => readFileSync(join(root, file), 'utf8');
const hasSystemd = spawnSync('systemd-analyze', ['--version']).status === 0;

/** `[Section]` → key → values (a key may repeat). */
function parseUnit(text: string): Map<string, Map<string, string[]>> {
  const sections = new Map<string, Map<string, string[]>>();
  let current: Map<string, string[]> | undefined;
  for (const raw of text.split('\n')) {
    const line = raw.trim();
    if (line === '' || line.startsWith('#') || line.startsWith(';')) continue;
    const section = /^\[(.+)\]$/.exec(line);
    if (section) {
      current = new Map();
      sections.set(section[1], current);
      continue;
    }
    const eq = line.indexOf('=');
    if (!current || eq < 1) throw new Error(`not a unit line: ${line}`);
    const key = line.slice(0, eq);
    current.set(key, [...(current.get(key) ?? []), line.slice(eq + 1)]);
  }
  return sections;
}

/** Runs the CLI with `--help` for a command and returns what it printed and its exit code. */
async function usageOf(command: string): Promise<{ code: number; text: string }> {
  let text = '';
  const write = process.stdout.write.bind(process.stdout);
  process.stdout.write = ((chunk: string) => {
    text += chunk;
    return true;
  }) as typeof process.stdout.write;
  try {
    return { code: await main([command, '--help']), text };
  } finally {
    process.stdout.write = write;
  }
}

describe.each(['deploy/residuum.service', 'deploy/residuum-collect.service'])('%s', (file) => {
  const unit = parseUnit(read(file));
  const service = unit.get('Service')!;
  const one = (key: string) => service.get(key)?.at(-1);

  it.skipIf(!hasSystemd)('passes systemd-analyze verify', () => {
    // check: systemd-analyze verify (systemd's own parser of unit files)
    const result = spawnSync('systemd-analyze', ['verify', join(root, file)], { encoding: 'utf8' });
    expect(result.stderr.trim()).toBe('');
    expect(result.status).toBe(0);
  });

  it('runs as its own user, read-only but for the data folder, and starts an existing command with known options', async () => {
    expect(['Unit', 'Service', 'Install']).toEqual([...unit.keys()]);
    expect(one('User')).toBe('residuum');
    expect(one('NoNewPrivileges')).toBe('yes');
    expect(one('ProtectSystem')).toBe('strict');
    expect(one('ReadWritePaths')).toBe('/var/lib/residuum');
    expect(one('StateDirectory')).toBe('residuum');
    expect(one('KillSignal')).toBe('SIGTERM');
    const [node, script, command, ...args] = one('ExecStart')!.split(/\s+/);
    expect(node).toBe('/usr/bin/node');
    expect(script).toBe('/opt/residuum/bin/residuum.js');
    expect(existsSync(join(root, 'bin', 'residuum.js'))).toBe(true);
    const { code, text } = await usageOf(command);
    expect(code).toBe(0);
    for (const option of args.filter((a) => a.startsWith('--'))) expect(text).toContain(option);
    expect(args[args.indexOf('--data') + 1]).toBe('/var/lib/residuum');
  });
});

describe('deploy/Containerfile', () => {
  const lines = read('deploy/Containerfile')
    .replace(/\\\n/g, ' ')
    .split('\n')
    .map((l) => l.trim())
    .filter((l) => l !== '' && !l.startsWith('#'));
  const instructions = lines.map((l) => {
    const space = l.indexOf(' ');
    return { op: l.slice(0, space).toUpperCase(), arg: l.slice(space + 1).trim() };
  });
  const all = (op: string) => instructions.filter((i) => i.op === op).map((i) => i.arg);

  // check: Dockerfile reference (instruction set; exec form is a JSON array) — common practice for the rest
  it('uses known instructions only, a pinned Node 20 base, exec-form entry point, and no ADD', () => {
    const known = ['FROM', 'RUN', 'WORKDIR', 'COPY', 'USER', 'VOLUME', 'ENV', 'EXPOSE', 'HEALTHCHECK', 'ENTRYPOINT', 'CMD'];
    for (const i of instructions) expect(known).toContain(i.op);
    expect(all('FROM')).toEqual(['node:20-bookworm-slim']);
    for (const op of ['ENTRYPOINT', 'CMD']) expect(() => JSON.parse(all(op)[0])).not.toThrow();
    expect(all('ADD')).toEqual([]);
  });

  it('runs as a numeric non-root user from before the entry point, writes only to the /data volume', () => {
    const userAt = instructions.findIndex((i) => i.op === 'USER');
    expect(userAt).toBeGreaterThan(0);
    expect(userAt).toBeLessThan(instructions.findIndex((i) => i.op === 'ENTRYPOINT'));
    const [uid, gid] = all('USER')[0].split(':').map(Number);
    expect(uid).toBeGreaterThan(0);
    expect(gid).toBeGreaterThan(0);
    expect(instructions.slice(userAt + 1).some((i) => i.op === 'RUN' || i.op === 'COPY')).toBe(false);
    expect(JSON.parse(all('VOLUME')[0])).toEqual(['/data']);
    expect(all('ENV').join(' ')).not.toMatch(/PASSWORD|SECRET|TOKEN|KEY=/i);
  });

  it('copies files that exist and starts a command the program has, with known options', async () => {
    for (const copy of all('COPY')) {
      const parts = copy.split(/\s+/);
      for (const source of parts.slice(0, -1)) expect(existsSync(join(root, source)), source).toBe(true);
    }
    const entry = JSON.parse(all('ENTRYPOINT')[0]) as string[];
    expect(entry).toEqual(['node', '/opt/residuum/bin/residuum.js']);
    const [command, ...args] = JSON.parse(all('CMD')[0]) as string[];
    const { code, text } = await usageOf(command);
    expect(code).toBe(0);
    for (const option of args.filter((a) => a.startsWith('--'))) expect(text).toContain(option);
    // The run command of the header comment too.
    const header = read('deploy/Containerfile').match(/docker run .*\n.*residuum (\w+) (.*)/);
    expect(header).not.toBeNull();
    const collect = await usageOf(header![1]);
    for (const option of header![2].split(/\s+/).filter((a) => a.startsWith('--'))) expect(collect.text).toContain(option);
  });
});

describe('residuum --version', () => {
  it('prints the version of package.json', async () => {
    let text = '';
    const write = process.stdout.write.bind(process.stdout);
    process.stdout.write = ((chunk: string) => {
      text += chunk;
      return true;
    }) as typeof process.stdout.write;
    try {
      expect(await main(['--version'])).toBe(0);
    } finally {
      process.stdout.write = write;
    }
    expect(text).toBe(`residuum ${(JSON.parse(read('package.json')) as { version: string }).version}\n`);
  });
});

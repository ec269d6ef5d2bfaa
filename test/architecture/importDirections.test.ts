// The layering of src/ (DEVELOPERS.md, "Layout"): imports run one way, from the commands down to
// the domain's shared words, and never in a circle. Checked from the import statements themselves
// as the TypeScript compiler reads them (ts.preProcessFile), so the shape stays when files move.
import { readdirSync, readFileSync } from 'node:fs';
import { dirname, join, relative, resolve } from 'node:path';
import { fileURLToPath } from 'node:url';
import ts from 'typescript';
import { describe, expect, it } from 'vitest';

const SRC = resolve(dirname(fileURLToPath(import.meta.url)), '../../src');

/**
 * What each area of src/ must not import (its first folder, or the file name for top-level files).
 * domain: the shared words at the bottom, imports nothing of the project; frames, vision and store
 * are handed zones and frames, never counting or what sits above it; counting is handed its outputs;
 * outputs and server are used by the commands, not the other way round.
 */
const FORBIDDEN: Readonly<Record<string, readonly string[]>> = {
  domain: ['*'],
  frames: ['vision', 'counting', 'outputs', 'server', 'commands', 'config', 'cli'],
  vision: ['frames', 'counting', 'outputs', 'server', 'commands', 'config', 'cli'],
  store: ['frames', 'vision', 'counting', 'outputs', 'server', 'commands', 'config', 'cli'],
  counting: ['outputs', 'server', 'commands', 'config', 'cli'],
  outputs: ['server', 'commands', 'cli'],
  server: ['commands', 'cli'],
  config: ['server', 'commands', 'cli'],
};

type ImportGraph = ReadonlyMap<string, readonly string[]>;

/** Relative imports of each file (paths relative to the source root), as the compiler sees them. */
function readImportGraph(root: string): ImportGraph {
  const files = (function walk(dir: string): string[] {
    return readdirSync(dir, { withFileTypes: true }).flatMap((e) =>
      e.isDirectory() ? walk(join(dir, e.name)) : /\.(ts|mts|mjs)$/.test(e.name) && !e.name.endsWith('.d.ts') ? [join(dir, e.name)] : [],
    );
  })(root);
  const graph = new Map<string, string[]>();
  for (const file of files) {
    const text = readFileSync(file, 'utf8');
    const { importedFiles } = ts.preProcessFile(text, true, true);
    graph.set(
      relative(root, file),
      importedFiles.map((i) => i.fileName).filter((name) => name.startsWith('.')).map((name) => relative(root, resolve(dirname(file), name))),
    );
  }
  return graph;
}

const areaOf = (path: string) => path.split('/')[0].replace(/\.(ts|mts|mjs)$/, '');

/** Each import that breaks FORBIDDEN, as "from → to". */
function upwardImports(graph: ImportGraph): string[] {
  const found: string[] = [];
  for (const [from, targets] of graph) {
    const forbidden = FORBIDDEN[areaOf(from)] ?? [];
    for (const to of targets) {
      const area = areaOf(to);
      if (area !== areaOf(from) && (forbidden.includes('*') || forbidden.includes(area))) found.push(`${from} → ${to}`);
    }
  }
  return found;
}

/** Every import cycle, each once, as "a → b → … → a" (depth-first search, back edges). */
function importCycles(graph: ImportGraph): string[] {
  const state = new Map<string, 'open' | 'done'>();
  const stack: string[] = [];
  const cycles: string[] = [];
  const visit = (file: string) => {
    state.set(file, 'open');
    stack.push(file);
    for (const next of graph.get(file) ?? []) {
      if (!graph.has(next)) continue;
      if (state.get(next) === 'open') cycles.push([...stack.slice(stack.indexOf(next)), next].join(' → '));
      else if (!state.has(next)) visit(next);
    }
    stack.pop();
    state.set(file, 'done');
  };
  for (const file of graph.keys()) if (!state.has(file)) visit(file);
  return cycles;
}

describe('import directions in src/', () => {
  const graph = readImportGraph(SRC);

  it('reads the real imports (the check is not vacuous)', () => {
    // check: common practice — a guard that the graph reader finds what is plainly there.
    expect(graph.size).toBeGreaterThan(150);
    expect(graph.get('counting/cameraPipeline.ts')).toContain('domain/zone.ts');
  });

  it('runs one way: nothing imports from a layer above it', () => {
    expect(upwardImports(graph)).toEqual([]);
  });

  it('has no import cycles', () => {
    expect(importCycles(graph)).toEqual([]);
  });

  it('reports an upward import and a cycle when there is one', () => {
    // check: hand-made graphs, one rule broken in each.
    const bad = new Map([
      ['vision/erode.ts', ['counting/zone.ts']],
      ['domain/zone.ts', ['frames/frame.ts']],
      ['counting/zone.ts', []],
      ['frames/frame.ts', []],
    ]);
    expect(upwardImports(bad)).toEqual(['vision/erode.ts → counting/zone.ts', 'domain/zone.ts → frames/frame.ts']);
    const circle = new Map([
      ['vision/a.ts', ['vision/b.ts']],
      ['vision/b.ts', ['vision/a.ts']],
    ]);
    expect(importCycles(circle)).toEqual(['vision/a.ts → vision/b.ts → vision/a.ts']);
  });
});

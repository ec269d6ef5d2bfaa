// `npm run build:kernels`: assembles the WebAssembly SIMD kernels from their text, one kernel a
// file under src/vision/kernels/wat/, into the two modules the loaders read:
// src/vision/kernels/learning.wasm (wat/learning/*.wat, loaded by src/vision/learningKernels.ts)
// and src/vision/kernels/counting.wasm (wat/counting/*.wat, loaded by src/vision/countingKernels.ts
// and src/vision/morphologyKernels.ts). Assembled by wabt, the WebAssembly Binary Toolkit. The
// .wasm files are committed so that running needs no build step; tests rebuild them and check
// that they match.
//
// Each .wat file is a module of its own, importing the one memory as env.memory, so that it
// reads (and, once expanded, assembles) alone; the build expands its repeat markers (see
// expandKernelText), assembles it alone to catch errors by file, then joins the functions of a
// module's files, in the order KERNEL_MODULES lists them, into one module sharing that memory.
import { readFileSync, writeFileSync } from 'node:fs';
import { fileURLToPath } from 'node:url';
import wabtInit from 'wabt';

/** The modules and, in order, the kernel files (src/vision/kernels/wat/<module>/<file>.wat) each joins. */
export const KERNEL_MODULES = {
  learning: ['centre', 'gram', 'combine', 'project', 'residual'],
  counting: ['residual', 'project', 'robust', 'threshold', 'gather', 'morph', 'select', 'pad'],
} as const;

export type KernelModule = keyof typeof KERNEL_MODULES;

const watDirectory = new URL('../src/vision/kernels/wat/', import.meta.url);

/** The text of one kernel file as written (repeat markers not expanded). */
export function kernelSource(module: KernelModule, file: string): string {
  return readFileSync(new URL(`${module}/${file}.wat`, watDirectory), 'utf8');
}

/**
 * Expands the repeat markers of a kernel's text, the only templating the kernels use (for the
 * copies of a line per component that an unrolled loop needs, and the variants per group count):
 *
 *     ;; @for j in 0..4*G-1
 *     (local.set $y{j} (v128.load32_splat offset={4*j} (local.get $y)))
 *     ;; @end
 *
 * A line `;; @for NAME in FROM..TO` repeats the lines up to its matching `;; @end` (markers
 * nest) once for each whole NAME from FROM to TO, both inclusive (none when TO < FROM), in
 * order; FROM and TO are expressions. In every line, `{EXPRESSION}` is replaced by its value.
 * Expressions are whole-number arithmetic on the names of the enclosing markers: + − * /
 * (division rounds toward zero), parentheses, decimal literals. Text without markers and
 * braces is returned as it is. Throws, naming `source` and the line, for an unknown name, an
 * unmatched marker or a malformed expression.
 */
export function expandKernelText(text: string, source = 'kernel text'): string {
  const lines = text.split('\n');
  const out: string[] = [];
  const fail = (line: number, message: string): never => {
    throw new Error(`${source}:${line + 1}: ${message}`);
  };
  /** Expands lines[from, to) with the names bound in `scope`. */
  const expand = (from: number, to: number, scope: ReadonlyMap<string, number>): void => {
    for (let i = from; i < to; i++) {
      const line = lines[i];
      const marker = /^\s*;;\s*@(for|end)\b(.*)$/.exec(line);
      if (marker === null) {
        out.push(line.replace(/\{([^{}]*)\}/g, (_, expression: string) => String(evaluate(expression, scope, (m) => fail(i, m)))));
        continue;
      }
      if (marker[1] === 'end') fail(i, '@end without its @for');
      const head = /^\s+([A-Za-z_]\w*)\s+in\s+(.+)\.\.(.+)$/.exec(marker[2]);
      if (head === null) fail(i, 'expected ";; @for NAME in FROM..TO"');
      const [, name, fromText, toText] = head!;
      let depth = 1;
      let end = i + 1;
      for (; end < to; end++) {
        const m = /^\s*;;\s*@(for|end)\b/.exec(lines[end]);
        if (m?.[1] === 'for') depth++;
        if (m?.[1] === 'end' && --depth === 0) break;
      }
      if (end >= to) fail(i, '@for without its @end');
      const first = evaluate(fromText, scope, (m) => fail(i, m));
      const last = evaluate(toText, scope, (m) => fail(i, m));
      for (let value = first; value <= last; value++) expand(i + 1, end, new Map(scope).set(name, value));
      i = end;
    }
  };
  expand(0, lines.length, new Map());
  return out.join('\n');
}

/** The value of a whole-number expression (see expandKernelText); `fail` gets a message on error. */
function evaluate(expression: string, scope: ReadonlyMap<string, number>, fail: (message: string) => never): number {
  const tokens = expression.match(/\d+|[A-Za-z_]\w*|\S/g) ?? [];
  let at = 0;
  const peek = () => tokens[at];
  const primary = (): number => {
    const token = tokens[at++];
    if (token === undefined) return fail(`expression "${expression}" ends early`);
    if (token === '(') {
      const value = sum();
      if (tokens[at++] !== ')') fail(`expression "${expression}": expected ")"`);
      return value;
    }
    if (token === '-') return -primary();
    if (/^\d+$/.test(token)) return Number(token);
    const value = scope.get(token);
    if (value === undefined) return fail(`expression "${expression}": unknown name "${token}"`);
    return value;
  };
  const product = (): number => {
    let value = primary();
    while (peek() === '*' || peek() === '/') value = tokens[at++] === '*' ? value * primary() : Math.trunc(value / primary());
    return value;
  };
  const sum = (): number => {
    let value = product();
    while (peek() === '+' || peek() === '-') value = tokens[at++] === '+' ? value + product() : value - product();
    return value;
  };
  const value = sum();
  if (at !== tokens.length) fail(`expression "${expression}": unexpected "${tokens[at]}"`);
  return value;
}

/** The header every kernel file starts with (after its comments): a module on the imported memory. */
const header = /^(?:\s|;;[^\n]*\n|\(;[\s\S]*?;\))*\(module\s*\(memory \(import "env" "memory"\) 1\)/;

/** The functions of one expanded kernel file: its module's text without the header and the closing parenthesis. */
function moduleBody(text: string, source: string): string {
  const match = header.exec(text);
  const close = text.lastIndexOf(')');
  if (match === null || close < match[0].length) throw new Error(`${source}: expected (module (memory (import "env" "memory") 1) … ) around the kernel`);
  if (text.slice(close + 1).replace(/;;[^\n]*/g, '').trim() !== '') throw new Error(`${source}: text after the module's closing parenthesis`);
  return text.slice(match[0].length, close);
}

/** The text of a whole module: the functions of its kernel files, expanded, in one module. */
export function kernelModuleText(module: KernelModule): string {
  const bodies = KERNEL_MODULES[module].map((file) => {
    const source = `src/vision/kernels/wat/${module}/${file}.wat`;
    return moduleBody(expandKernelText(kernelSource(module, file), source), source);
  });
  return `(module\n  (memory (import "env" "memory") 1)\n${bodies.join('\n')})\n`;
}

/** The assembled module: each kernel file assembled alone first, so that an error names its file. */
export async function buildKernelModule(module: KernelModule): Promise<Uint8Array> {
  for (const file of KERNEL_MODULES[module]) {
    const source = `src/vision/kernels/wat/${module}/${file}.wat`;
    await assemble(source, expandKernelText(kernelSource(module, file), source));
  }
  return assemble(`${module}.wat`, kernelModuleText(module));
}

async function assemble(name: string, text: string): Promise<Uint8Array> {
  const wabt = await wabtInit();
  // As UTF-8 bytes: the comments may hold any character (a string argument is read a byte per character).
  const parsed = wabt.parseWat(name, new TextEncoder().encode(text), { simd: true });
  try {
    parsed.validate();
    return new Uint8Array(parsed.toBinary({}).buffer);
  } finally {
    parsed.destroy();
  }
}

if (process.argv[1] === fileURLToPath(import.meta.url)) {
  for (const module of Object.keys(KERNEL_MODULES) as KernelModule[]) {
    const target = fileURLToPath(new URL(`../src/vision/kernels/${module}.wasm`, import.meta.url));
    writeFileSync(target, await buildKernelModule(module));
    process.stdout.write(`wrote ${target}\n`);
  }
}

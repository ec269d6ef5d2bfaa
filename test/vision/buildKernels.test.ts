import { describe, expect, it } from 'vitest';
import { buildKernelModule, expandKernelText, KERNEL_MODULES, kernelModuleText, kernelSource } from '../../scripts/buildKernels.ts';

// The build of the WebAssembly kernels from src/vision/kernels/wat/: the repeat markers, and
// that every kernel file is a module of its own. (That the committed .wasm files are this
// build is checked in learningKernels.test.ts and countingKernels.test.ts.)

describe('expandKernelText', () => {
  it('leaves text without markers as it is', () => {
    const text = ';; a comment with −, ×, Σ\n(module (func (export "f") (local $a0 i32)))\n';
    expect(expandKernelText(text)).toBe(text);
  });

  it('repeats the lines of a marker for each value, both ends inclusive, and substitutes expressions', () => {
    const text = ['a', '  ;; @for j in 0..2', '  (x{j} {4*j} {10-j*2})', '  ;; @end', 'b'].join('\n');
    expect(expandKernelText(text)).toBe(['a', '  (x0 0 10)', '  (x1 4 8)', '  (x2 8 6)', 'b'].join('\n'));
  });

  it('nests markers, bounds may use outer names, and an empty range gives no lines', () => {
    // The pairs p ≤ q of 3 components and their slots q(q + 1)/2 + p, as robust.wat numbers them.
    const text = [';; @for q in 0..2', ';; @for p in 0..q', '{p}{q}:{q*(q+1)/2+p}', ';; @end', ';; @end', ';; @for j in 1..0', 'never', ';; @end'].join('\n');
    expect(expandKernelText(text).split('\n')).toEqual(['00:0', '01:1', '11:2', '02:3', '12:4', '22:5']);
    expect(expandKernelText(';; @for G in 2..3\n;; @for j in 0..4*G-1\n{j}\n;; @end\n;; @end').split('\n')).toEqual(['0', '1', '2', '3', '4', '5', '6', '7', '0', '1', '2', '3', '4', '5', '6', '7', '8', '9', '10', '11']);
  });

  it('rounds division toward zero and reads parentheses and unary minus', () => {
    expect(expandKernelText('{7/2} {(1+2)*3} {-3/2} {2-(4-1)}')).toBe('3 9 -1 -1');
  });

  it('names the source and line of a bad marker or expression', () => {
    expect(() => expandKernelText('x\n{k}', 'a.wat')).toThrow(/^a\.wat:2: expression "k": unknown name "k"$/);
    expect(() => expandKernelText(';; @for j in 0..3\nx', 'a.wat')).toThrow(/a\.wat:1: @for without its @end/);
    expect(() => expandKernelText('x\n;; @end', 'a.wat')).toThrow(/a\.wat:2: @end without its @for/);
    expect(() => expandKernelText(';; @for j from 0 to 3\n;; @end', 'a.wat')).toThrow(/a\.wat:1: expected ";; @for NAME in FROM\.\.TO"/);
    expect(() => expandKernelText('{2 3}', 'a.wat')).toThrow(/a\.wat:1: expression "2 3": unexpected "3"/);
    expect(() => expandKernelText('{(2}', 'a.wat')).toThrow(/expected "\)"/);
  });
});

describe('the kernel files', () => {
  it('are each a module on the imported memory that assembles alone, and join into the modules the loaders read', async () => {
    const exports: Record<string, string[]> = {};
    for (const module of ['learning', 'counting'] as const) {
      for (const file of KERNEL_MODULES[module]) {
        const text = expandKernelText(kernelSource(module, file), file);
        expect(text).toMatch(/\(module\s+\(memory \(import "env" "memory"\) 1\)/);
        const names = [...text.matchAll(/\(func \(export "([^"]+)"\)/g)].map((m) => m[1]);
        // Each file holds its own kernel: named like the file, with a variant per group count
        // (1..6) for the counting passes that unroll over components.
        expect(names.every((name) => name.replace(/_g\d$/, '') === file), `${module}/${file}`).toBe(true);
        exports[`${module}/${file}`] = names;
      }
      const binary = await buildKernelModule(module);
      const instance = new WebAssembly.Instance(new WebAssembly.Module(binary), { env: { memory: new WebAssembly.Memory({ initial: 1 }) } });
      expect(Object.keys(instance.exports).sort()).toEqual(KERNEL_MODULES[module].flatMap((file) => exports[`${module}/${file}`]).sort());
      expect(kernelModuleText(module).match(/\(memory /g)).toHaveLength(1);
    }
    expect(exports['counting/residual']).toEqual(['residual_g1', 'residual_g2', 'residual_g3', 'residual_g4', 'residual_g5', 'residual_g6']);
    expect(exports['counting/robust']).toHaveLength(6);
    expect(exports['counting/project']).toHaveLength(6);
  });
});

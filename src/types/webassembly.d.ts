// The part of the WebAssembly JS API that Node provides and the kernels use. TypeScript declares
// it only in its DOM library, which this project does not load.
declare namespace WebAssembly {
  class Memory {
    constructor(descriptor: { initial: number; maximum?: number });
    readonly buffer: ArrayBuffer;
    grow(delta: number): number;
  }
  class Module {
    constructor(bytes: BufferSource);
  }
  class Instance {
    constructor(module: Module, imports?: Record<string, Record<string, unknown>>);
    readonly exports: Record<string, unknown>;
  }
}
type BufferSource = ArrayBufferView | ArrayBuffer;

// The one loader of the WebAssembly kernels (compiled from ./assembly/*.ts by scripts/build-wasm.mjs into
// ./generated/*.ts). Each kernel module is instantiated once per thread, on first use, from the base64 bytes
// its generated file holds; callers place their numbers in the module's own memory (reserve, then f64 views) and
// call its exports with byte offsets. Where WebAssembly or its SIMD instructions are missing, or the kernels
// are switched off (setWebAssemblyKernels(false), for the benches' side-by-side runs and the tests' oracles),
// `kernelModule` answers null and callers take their JavaScript path, which gives the same bits.

let enabled = true;

/** Switch the WebAssembly kernels on or off in this thread (the JavaScript paths give the same results). */
export function setWebAssemblyKernels(on: boolean): void {
  enabled = on;
}

/** Whether the WebAssembly kernels are switched on in this thread. */
export function webAssemblyKernelsOn(): boolean {
  return enabled;
}

/** Bytes in one page of WebAssembly memory. */
const PAGE = 65536;
/** The most memory one kernel module may hold (a 32-bit module addresses 4 GiB; leave room below it). */
const MAX_BYTES = 2 ** 31;

/** An instantiated kernel module and its memory, laid out by the caller above the module's static data. */
export class KernelModule {
  readonly exports: WebAssembly.Exports;
  /** The first byte callers may use (16-byte aligned). */
  readonly heapBase: number;
  private readonly memory: WebAssembly.Memory;

  constructor(instance: WebAssembly.Instance) {
    this.exports = instance.exports;
    this.memory = instance.exports.memory as WebAssembly.Memory;
    const base = (instance.exports.heapBase as () => number)();
    this.heapBase = Math.ceil(base / 16) * 16;
  }

  /**
   * Make sure `bytes` bytes from heapBase are addressable. Returns false (and changes nothing) when that is more
   * than a module may hold; the caller then takes its JavaScript path. Growing detaches every view taken before.
   */
  reserve(bytes: number): boolean {
    const need = this.heapBase + bytes;
    if (!(need <= MAX_BYTES)) return false;
    const have = this.memory.buffer.byteLength;
    if (need > have) this.memory.grow(Math.ceil((need - have) / PAGE));
    return true;
  }

  /** A view of `length` doubles at byte offset `at` of the module's memory (valid until the next reserve). */
  f64(at: number, length: number): Float64Array {
    return new Float64Array(this.memory.buffer, at, length);
  }

  /** A view of `length` 32-bit integers at byte offset `at` of the module's memory (valid until the next reserve). */
  i32(at: number, length: number): Int32Array {
    return new Int32Array(this.memory.buffer, at, length);
  }
}

const modules = new Map<string, KernelModule | null>();
/** Modules compiled in the background by compileAhead, not yet instantiated. */
const compiled = new Map<string, WebAssembly.Module>();
const compiling = new Set<string>();

/**
 * Starts compiling the kernel module `name` in the background (WebAssembly.compile, off this thread), so that its
 * first use finds it compiled instead of compiling it then: for short jobs (one predicted frame), whose main thread
 * meanwhile reads the model and the frame. A module not compiled by its first use is compiled there as before;
 * nothing happens when the kernels are off or this engine has no WebAssembly. The promise (never rejected) settles
 * when the compile has ended; callers need not wait for it.
 */
export function compileAhead(name: string, base64: string): Promise<void> {
  if (!enabled || typeof WebAssembly !== 'object' || typeof WebAssembly.compile !== 'function' || modules.has(name) || compiling.has(name)) return Promise.resolve();
  compiling.add(name);
  try {
    return WebAssembly.compile(bytesOf(base64)).then(
      (m) => {
        if (!modules.has(name)) compiled.set(name, m); // else its first use compiled it already
      },
      () => undefined, // refused (no SIMD): the first use finds out again and takes the JavaScript path
    );
  } catch {
    return Promise.resolve(); // as above
  }
}

/**
 * The kernel module `name`, compiled from its base64 bytes on first use in this thread; null when the kernels are
 * switched off or this engine cannot run them (no WebAssembly, no SIMD).
 */
export function kernelModule(name: string, base64: string): KernelModule | null {
  if (!enabled) return null;
  let m = modules.get(name);
  if (m === undefined) {
    m = instantiate(base64, compiled.get(name));
    compiled.delete(name);
    modules.set(name, m);
  }
  return m;
}

/**
 * The bytes of a module's base64 text. A plain loop: Uint8Array.from(text, callback) called the callback per
 * character through the string's iterator, 4–20 ms per module in a fresh process (the code not yet compiled),
 * against 0.5–1 ms; compiling the module then takes 0.5–2.5 ms.
 */
function bytesOf(base64: string): Uint8Array<ArrayBuffer> {
  const text = atob(base64);
  const bytes = new Uint8Array(text.length);
  for (let i = 0; i < text.length; i++) bytes[i] = text.charCodeAt(i);
  return bytes;
}

function instantiate(base64: string, ahead?: WebAssembly.Module): KernelModule | null {
  if (typeof WebAssembly !== 'object') return null;
  try {
    const instance = new WebAssembly.Instance(ahead ?? new WebAssembly.Module(bytesOf(base64)), {});
    return new KernelModule(instance);
  } catch {
    // an engine without SIMD refuses the module at compile time: the JavaScript path serves instead
    return null;
  }
}

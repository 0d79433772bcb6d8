// The prediction's kernel modules, compiled in the background ahead of their first use (load.ts compileAhead):
// called when a model is loaded for predicting, so that a one-frame job finds them compiled, and by each predict
// worker as it starts, before its first batch arrives.
import { WASM_BASE64 as DESCRIPTORS } from './generated/descriptors.ts';
import { WASM_BASE64 as NEIGHBOURS } from './generated/neighbour-search.ts';
import { WASM_BASE64 as PREDICTION } from './generated/prediction-kernels.ts';
import { compileAhead } from './load.ts';

/** Starts compiling the kernels prediction uses (neighbour search, descriptors, prediction kernels). */
export function compilePredictionKernelsAhead(): void {
  compileAhead('neighbour-search', NEIGHBOURS);
  compileAhead('descriptors', DESCRIPTORS);
  compileAhead('prediction-kernels', PREDICTION);
}

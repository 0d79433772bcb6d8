// The error band the trajectory chart draws around a running mean: the error of the mean after all n samples
// (from the trajectory analysis, never computed here) scaled as 1/√t to the running mean after t samples
// (stationary series assumed). The running means and errors themselves come from the service.

/** Error of the running mean after t samples, from the error `finalError` after all n: finalError·√(n/t). */
export function runningError(finalError: number, n: number, t: number): number {
  return finalError * Math.sqrt(n / Math.max(1, t));
}

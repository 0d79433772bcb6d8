// Speed of the angular maths: real harmonics per neighbour (the density expansion's inner call), Wigner
// matrices, and the first (uncached) and later (cached) real Clebsch–Gordan tables. Figures only.
import { realClebschGordan } from '../src-main/core/descriptors/clebsch-gordan.ts';
import { realSphericalHarmonics } from '../src-main/core/descriptors/harmonics.ts';
import { makeRng } from '../src-main/core/numerics/random.ts';
import { symmetricEigen } from '../src-main/core/dielectric/tensor.ts';
import { randomRotation, wignerDRealUpTo } from '../src-main/core/descriptors/wigner.ts';

function time(label: string, count: number, unit: string, body: () => void): void {
  body(); // warm-up
  const t0 = performance.now();
  body();
  const ms = performance.now() - t0;
  console.log(`${label}: ${((ms * 1e6) / count / 1e3).toFixed(3)} µs/${unit} (${count} ${unit}s in ${ms.toFixed(1)} ms)`);
}

export async function run(): Promise<void> {
  const rng = makeRng(1);
  const n = 200_000;
  const v = Float64Array.from({ length: 3 * n }, () => rng.normal());
  for (const lmax of [4, 6, 8, 10]) {
    const out = new Float64Array((lmax + 1) ** 2);
    let sink = 0;
    time(`realSphericalHarmonics lmax=${lmax}, one thread`, n, 'vector', () => {
      for (let k = 0; k < n; k++) {
        realSphericalHarmonics(lmax, v[3 * k], v[3 * k + 1], v[3 * k + 2], out);
        sink += out[lmax];
      }
    });
    if (!Number.isFinite(sink)) console.log('unexpected non-finite sum');
  }
  const rotations = Array.from({ length: 200 }, () => randomRotation(rng));
  for (const lmax of [2, 6, 10]) {
    time(`wignerDRealUpTo lmax=${lmax}`, rotations.length, 'rotation', () => {
      for (const R of rotations) wignerDRealUpTo(lmax, R);
    });
  }
  let t0 = performance.now();
  let entries = 0;
  for (let l1 = 0; l1 <= 8; l1++) for (let l2 = 0; l2 <= 8; l2++) for (let L = Math.abs(l1 - l2); L <= Math.min(l1 + l2, 8); L += 2) entries += realClebschGordan(l1, l2, L).length;
  console.log(`realClebschGordan all l1,l2,L ≤ 8 (even sums), first call: ${(performance.now() - t0).toFixed(1)} ms for ${entries} coefficients`);
  t0 = performance.now();
  for (let l1 = 0; l1 <= 8; l1++) for (let l2 = 0; l2 <= 8; l2++) for (let L = Math.abs(l1 - l2); L <= Math.min(l1 + l2, 8); L += 2) realClebschGordan(l1, l2, L);
  console.log(`  again (cached): ${(performance.now() - t0).toFixed(2)} ms`);
  const T = Float64Array.of(3, 0.2, -0.1, 0.2, 2, 0.4, -0.1, 0.4, 1);
  time('symmetricEigen (Jacobi)', 100_000, 'tensor', () => {
    for (let k = 0; k < 100_000; k++) symmetricEigen(T);
  });
}

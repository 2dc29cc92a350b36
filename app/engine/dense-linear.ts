/**
 * Small dense linear solves for the solvers' Newton steps (systems of the size of the number of
 * sites, a few hundred at most). Row-major Float64Array, factorised in place.
 */

/**
 * Solves A·x = b for symmetric positive definite A by Cholesky (A = L·Lᵀ), reading only the
 * lower triangle. A non-positive pivot (A only semidefinite through rounding) is lifted to a tiny
 * multiple of the diagonal's size — a Levenberg-style guard; the caller's line search copes with
 * the slightly shortened step. Overwrites `a` with L and `b` with x.
 */
export function choleskySolveInPlace(a: Float64Array, b: Float64Array, size: number): void {
  let largestDiagonal = 0;
  for (let k = 0; k < size; k++) largestDiagonal = Math.max(largestDiagonal, Math.abs(a[k * size + k]));
  const floor = Math.max(largestDiagonal, 1e-300) * 1e-14;
  for (let j = 0; j < size; j++) {
    const rowJ = j * size;
    let diagonal = a[rowJ + j];
    for (let k = 0; k < j; k++) diagonal -= a[rowJ + k] * a[rowJ + k];
    if (!(diagonal > floor)) diagonal = floor;
    const pivot = Math.sqrt(diagonal);
    a[rowJ + j] = pivot;
    for (let i = j + 1; i < size; i++) {
      const rowI = i * size;
      let sum = a[rowI + j];
      for (let k = 0; k < j; k++) sum -= a[rowI + k] * a[rowJ + k];
      a[rowI + j] = sum / pivot;
    }
  }
  for (let i = 0; i < size; i++) {
    const rowI = i * size;
    let sum = b[i];
    for (let k = 0; k < i; k++) sum -= a[rowI + k] * b[k];
    b[i] = sum / a[rowI + i];
  }
  for (let i = size - 1; i >= 0; i--) {
    let sum = b[i];
    for (let k = i + 1; k < size; k++) sum -= a[k * size + i] * b[k];
    b[i] = sum / a[i * size + i];
  }
}

/** Solves A·x = b by LU with partial pivoting; returns false when A is numerically singular. */
export function luSolveInPlace(a: Float64Array, b: Float64Array, size: number): boolean {
  for (let k = 0; k < size; k++) {
    let pivotRow = k;
    let pivotSize = Math.abs(a[k * size + k]);
    for (let i = k + 1; i < size; i++) {
      const candidate = Math.abs(a[i * size + k]);
      if (candidate > pivotSize) {
        pivotSize = candidate;
        pivotRow = i;
      }
    }
    if (!(pivotSize > 0)) return false;
    if (pivotRow !== k) {
      for (let c = 0; c < size; c++) {
        const t = a[k * size + c];
        a[k * size + c] = a[pivotRow * size + c];
        a[pivotRow * size + c] = t;
      }
      const t = b[k];
      b[k] = b[pivotRow];
      b[pivotRow] = t;
    }
    const pivot = a[k * size + k];
    for (let i = k + 1; i < size; i++) {
      const factor = a[i * size + k] / pivot;
      if (factor === 0) continue;
      a[i * size + k] = factor;
      for (let c = k + 1; c < size; c++) a[i * size + c] -= factor * a[k * size + c];
      b[i] -= factor * b[k];
    }
  }
  for (let i = size - 1; i >= 0; i--) {
    let sum = b[i];
    for (let c = i + 1; c < size; c++) sum -= a[i * size + c] * b[c];
    b[i] = sum / a[i * size + i];
  }
  return true;
}

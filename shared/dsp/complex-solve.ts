// Solves small dense complex systems G·c = b (G Hermitian positive definite: the normal
// equations of a joint component fit) by Gaussian elimination with partial pivoting, in
// caller-sized scratch so nothing is allocated per solve.

export class ComplexSolver {
  readonly capacity: number;
  /** Row-major n×n matrix, real and imaginary parts; filled by the caller. */
  readonly gRe: Float64Array;
  readonly gIm: Float64Array;
  /** Right-hand side on input, solution on output. */
  readonly bRe: Float64Array;
  readonly bIm: Float64Array;

  constructor(capacity: number) {
    this.capacity = capacity;
    this.gRe = new Float64Array(capacity * capacity);
    this.gIm = new Float64Array(capacity * capacity);
    this.bRe = new Float64Array(capacity);
    this.bIm = new Float64Array(capacity);
  }

  /** Solves in place for an n×n system (stride = capacity). Returns false when singular. */
  solve(n: number): boolean {
    const s = this.capacity;
    const { gRe, gIm, bRe, bIm } = this;
    for (let col = 0; col < n; col++) {
      let pivot = col;
      let best = 0;
      for (let row = col; row < n; row++) {
        const magnitude = Math.hypot(gRe[row * s + col], gIm[row * s + col]);
        if (magnitude > best) {
          best = magnitude;
          pivot = row;
        }
      }
      if (best === 0) return false;
      if (pivot !== col) {
        for (let k = 0; k < n; k++) {
          swap(gRe, pivot * s + k, col * s + k);
          swap(gIm, pivot * s + k, col * s + k);
        }
        swap(bRe, pivot, col);
        swap(bIm, pivot, col);
      }
      const pRe = gRe[col * s + col];
      const pIm = gIm[col * s + col];
      const pNorm = pRe * pRe + pIm * pIm;
      for (let row = col + 1; row < n; row++) {
        // factor = G[row][col] / G[col][col]
        const rRe = gRe[row * s + col];
        const rIm = gIm[row * s + col];
        const fRe = (rRe * pRe + rIm * pIm) / pNorm;
        const fIm = (rIm * pRe - rRe * pIm) / pNorm;
        for (let k = col; k < n; k++) {
          const cRe = gRe[col * s + k];
          const cIm = gIm[col * s + k];
          gRe[row * s + k] -= fRe * cRe - fIm * cIm;
          gIm[row * s + k] -= fRe * cIm + fIm * cRe;
        }
        bRe[row] -= fRe * bRe[col] - fIm * bIm[col];
        bIm[row] -= fRe * bIm[col] + fIm * bRe[col];
      }
    }
    for (let row = n - 1; row >= 0; row--) {
      let accRe = bRe[row];
      let accIm = bIm[row];
      for (let k = row + 1; k < n; k++) {
        accRe -= gRe[row * s + k] * bRe[k] - gIm[row * s + k] * bIm[k];
        accIm -= gRe[row * s + k] * bIm[k] + gIm[row * s + k] * bRe[k];
      }
      const dRe = gRe[row * s + row];
      const dIm = gIm[row * s + row];
      const dNorm = dRe * dRe + dIm * dIm;
      bRe[row] = (accRe * dRe + accIm * dIm) / dNorm;
      bIm[row] = (accIm * dRe - accRe * dIm) / dNorm;
    }
    return true;
  }
}

function swap(array: Float64Array, i: number, j: number): void {
  const t = array[i];
  array[i] = array[j];
  array[j] = t;
}

/**
 * Small dense linear algebra on plain arrays (row-major number[][]).
 * Sizes here are tiny (up to ~25 unknowns), so clarity wins over blocking.
 */

/**
 * Solve A x = b by Gaussian elimination with partial pivoting. O(n^3).
 * Returns null when A is singular to working precision.
 */
export function solve(A: number[][], b: number[]): number[] | null {
  const n = b.length;
  const M = A.map((r, i) => [...r, b[i]]);
  for (let c = 0; c < n; c++) {
    let piv = c;
    for (let r = c + 1; r < n; r++) if (Math.abs(M[r][c]) > Math.abs(M[piv][c])) piv = r;
    if (!(Math.abs(M[piv][c]) > 1e-300)) return null;
    [M[c], M[piv]] = [M[piv], M[c]];
    for (let r = c + 1; r < n; r++) {
      const f = M[r][c] / M[c][c];
      if (f === 0) continue;
      for (let k = c; k <= n; k++) M[r][k] -= f * M[c][k];
    }
  }
  const x = new Array(n).fill(0);
  for (let r = n - 1; r >= 0; r--) {
    let s = M[r][n];
    for (let k = r + 1; k < n; k++) s -= M[r][k] * x[k];
    x[r] = s / M[r][r];
  }
  return x;
}

/**
 * Inverse of a symmetric positive semi-definite matrix by Cholesky with a
 * relative pivot tolerance; returns null when not positive definite.
 */
export function invertSpd(A: number[][]): number[][] | null {
  const n = A.length;
  const L = A.map(() => new Array(n).fill(0));
  const maxDiag = Math.max(...A.map((r, i) => Math.abs(r[i])), 0);
  for (let j = 0; j < n; j++) {
    let s = A[j][j];
    for (let k = 0; k < j; k++) s -= L[j][k] * L[j][k];
    if (!(s > 1e-14 * maxDiag)) return null;
    L[j][j] = Math.sqrt(s);
    for (let i = j + 1; i < n; i++) {
      let t = A[i][j];
      for (let k = 0; k < j; k++) t -= L[i][k] * L[j][k];
      L[i][j] = t / L[j][j];
    }
  }
  // invert L, then A^-1 = L^-T L^-1
  const Li = A.map(() => new Array(n).fill(0));
  for (let i = 0; i < n; i++) {
    Li[i][i] = 1 / L[i][i];
    for (let j = 0; j < i; j++) {
      let s = 0;
      for (let k = j; k < i; k++) s -= L[i][k] * Li[k][j];
      Li[i][j] = s / L[i][i];
    }
  }
  const inv = A.map(() => new Array(n).fill(0));
  for (let i = 0; i < n; i++)
    for (let j = 0; j <= i; j++) {
      let s = 0;
      for (let k = i; k < n; k++) s += Li[k][i] * Li[k][j];
      inv[i][j] = inv[j][i] = s;
    }
  return inv;
}

/**
 * Linear least squares min ||y - X beta|| for a design given column-wise
 * (cols[j][i] = X[i][j]), by the normal equations with column scaling.
 */
export function lstsq(cols: ArrayLike<number>[], y: ArrayLike<number>): number[] | null {
  return lstsqSolver(cols)(y);
}

/**
 * The solver of lstsq for a fixed design, for many right-hand sides: the scaled
 * normal matrix is formed once (same arithmetic as lstsq, so the same results).
 */
export function lstsqSolver(cols: ArrayLike<number>[]): (y: ArrayLike<number>) => number[] | null {
  const p = cols.length;
  const { A0, scale } = normalEquations(cols);
  return (y) => {
    const b: number[] = [];
    for (let j = 0; j < p; j++) {
      let s = 0;
      for (let i = 0; i < y.length; i++) s += cols[j][i] * y[i];
      b.push(s / scale[j]);
    }
    const x = solve(A0, b); // solve works on a copy
    return x ? x.map((v, j) => v / scale[j]) : null;
  };
}

/** The column-scaled normal matrix A0 = D^-1 X^T X D^-1 (D = column norms, in scale) of lstsq. */
export function normalEquations(cols: ArrayLike<number>[]): { A0: number[][]; scale: number[] } {
  const p = cols.length;
  const n = p ? cols[0].length : 0;
  const scale = cols.map((c) => {
    let s = 0;
    for (let i = 0; i < n; i++) s += c[i] * c[i];
    return Math.sqrt(s) || 1;
  });
  const A0: number[][] = [];
  for (let j = 0; j < p; j++) {
    A0.push(new Array(p).fill(0));
    for (let k = 0; k <= j; k++) {
      let t = 0;
      for (let i = 0; i < n; i++) t += cols[j][i] * cols[k][i];
      A0[j][k] = t / (scale[j] * scale[k]);
    }
  }
  for (let j = 0; j < p; j++) for (let k = j + 1; k < p; k++) A0[j][k] = A0[k][j];
  return { A0, scale };
}

/**
 * Eigenvalues of a real symmetric matrix by the cyclic Jacobi method (rotations
 * until the off-diagonal mass is negligible), in ascending order. O(n^3) per sweep of
 * rotations; meant for the small matrices here (n <= ~50). A is not modified.
 * Reference: G. H. Golub and C. F. Van Loan, Matrix Computations, 4th ed., Johns
 * Hopkins 2013, sec. 8.5 (Jacobi methods).
 * @example symmetricEigenvalues([[2, 1], [1, 2]]) // [1, 3]
 */
export function symmetricEigenvalues(A: readonly (readonly number[])[]): number[] {
  const n = A.length;
  const a = A.map((r) => [...r]);
  let total = 0;
  for (let i = 0; i < n; i++) for (let j = 0; j < n; j++) total += a[i][j] * a[i][j];
  for (let sweep = 0; sweep < 100; sweep++) {
    let off = 0;
    for (let i = 0; i < n; i++) for (let j = i + 1; j < n; j++) off += a[i][j] * a[i][j];
    if (!(off > 1e-30 * total)) break;
    for (let p = 0; p < n; p++) {
      for (let q = p + 1; q < n; q++) {
        const apq = a[p][q];
        if (apq === 0) continue;
        const theta = (a[q][q] - a[p][p]) / (2 * apq);
        const t = (theta >= 0 ? 1 : -1) / (Math.abs(theta) + Math.sqrt(theta * theta + 1));
        const c = 1 / Math.sqrt(t * t + 1),
          s = t * c;
        for (let k = 0; k < n; k++) {
          const akp = a[k][p],
            akq = a[k][q];
          a[k][p] = c * akp - s * akq;
          a[k][q] = s * akp + c * akq;
        }
        for (let k = 0; k < n; k++) {
          const apk = a[p][k],
            aqk = a[q][k];
          a[p][k] = c * apk - s * aqk;
          a[q][k] = s * apk + c * aqk;
        }
      }
    }
  }
  return a.map((r, i) => r[i]).sort((x, y) => x - y);
}

/**
 * Lower Cholesky factor L of a symmetric positive definite matrix (A = L L^T), or
 * null when a pivot is not above tol x the largest diagonal entry (not positive
 * definite to working precision).
 */
export function cholesky(A: readonly (readonly number[])[], tol = 1e-14): number[][] | null {
  const n = A.length;
  const L = A.map(() => new Array<number>(n).fill(0));
  let maxDiag = 0;
  for (let i = 0; i < n; i++) maxDiag = Math.max(maxDiag, Math.abs(A[i][i]));
  for (let j = 0; j < n; j++) {
    let s = A[j][j];
    for (let k = 0; k < j; k++) s -= L[j][k] * L[j][k];
    if (!(s > tol * maxDiag)) return null;
    L[j][j] = Math.sqrt(s);
    for (let i = j + 1; i < n; i++) {
      let t = A[i][j];
      for (let k = 0; k < j; k++) t -= L[i][k] * L[j][k];
      L[i][j] = t / L[j][j];
    }
  }
  return L;
}

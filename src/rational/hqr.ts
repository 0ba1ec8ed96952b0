/**
 * Eigenvalues (only) of a small general real matrix: Householder reduction to upper Hessenberg
 * form, then the Francis double-shift QR iteration.
 * // Hessenberg QR: EISPACK orthes/hqr (Smith et al., Matrix Eigensystem Routines, 1976); Golub & Van Loan §7.5.
 * Much faster than a full eigen-decomposition with vectors for the (m−1)×(m−1) pole matrices
 * of AAA. Complex eigenvalues come in conjugate pairs. Pure.
 */
export function eigenvaluesReal(Ain: Float64Array, n: number): { re: Float64Array; im: Float64Array } {
  const a = new Float64Array(Ain); // row-major copy, a[i*n+j]
  const wr = new Float64Array(n), wi = new Float64Array(n);
  if (n === 0) return { re: wr, im: wi };
  // two functions (reduction, iteration), each optimised on its own complete type feedback in a cold process
  hessenberg(a, n);
  francisQR(a, n, wr, wi);
  return { re: wr, im: wi };
}

/** Householder reduction of the row-major n×n `a` to upper Hessenberg form in place (orthes). */
function hessenberg(a: Float64Array, n: number): void {
  const A = (i: number, j: number) => a[i * n + j]!;
  const ort = new Float64Array(n);
  for (let m = 1; m < n - 1; m++) {
    let scale = 0;
    for (let i = m; i < n; i++) scale += Math.abs(A(i, m - 1));
    if (scale === 0) continue;
    let hsum = 0;
    for (let i = n - 1; i >= m; i--) { ort[i] = A(i, m - 1) / scale; hsum += ort[i]! * ort[i]!; }
    const g = ort[m]! > 0 ? -Math.sqrt(hsum) : Math.sqrt(hsum);
    hsum -= ort[m]! * g;
    ort[m] = ort[m]! - g;
    for (let j = m; j < n; j++) {
      let f = 0;
      for (let i = n - 1; i >= m; i--) f += ort[i]! * A(i, j);
      f /= hsum;
      for (let i = m; i < n; i++) a[i * n + j] = A(i, j) - f * ort[i]!;
    }
    for (let i = 0; i < n; i++) {
      let f = 0;
      for (let j = n - 1; j >= m; j--) f += ort[j]! * A(i, j);
      f /= hsum;
      for (let j = m; j < n; j++) a[i * n + j] = A(i, j) - f * ort[j]!;
    }
    ort[m] = scale * ort[m]!;
    a[m * n + m - 1] = scale * g;
    for (let i = m + 1; i < n; i++) a[i * n + m - 1] = 0;
  }
}

/** Eigenvalues of the upper Hessenberg `a` (destroyed) by the Francis double-shift QR iteration (hqr). */
function francisQR(a: Float64Array, n: number, wr: Float64Array, wi: Float64Array): void {
  const A = (i: number, j: number) => a[i * n + j]!;
  // Francis double-shift QR on the Hessenberg matrix (hqr)
  let anorm = 0;
  for (let i = 0; i < n; i++) for (let j = Math.max(i - 1, 0); j < n; j++) anorm += Math.abs(A(i, j));
  let nn = n - 1, t = 0;
  const eps = 2.220446049250313e-16;
  while (nn >= 0) {
    let its = 0, l: number;
    do {
      for (l = nn; l >= 1; l--) {
        const s = Math.abs(A(l - 1, l - 1)) + Math.abs(A(l, l));
        if (Math.abs(A(l, l - 1)) <= eps * (s === 0 ? anorm : s)) { a[l * n + l - 1] = 0; break; }
      }
      const x = A(nn, nn);
      if (l === nn) { wr[nn] = x + t; wi[nn] = 0; nn--; }
      else {
        const y = A(nn - 1, nn - 1), w = A(nn, nn - 1) * A(nn - 1, nn);
        if (l === nn - 1) {
          const p = 0.5 * (y - x), q = p * p + w, z = Math.sqrt(Math.abs(q));
          const xx = x + t;
          if (q >= 0) {
            const zz = p + (p >= 0 ? Math.abs(z) : -Math.abs(z));
            wr[nn - 1] = wr[nn] = xx + zz;
            if (zz !== 0) wr[nn] = xx - w / zz;
            wi[nn - 1] = wi[nn] = 0;
          } else {
            wr[nn - 1] = wr[nn] = xx + p;
            wi[nn - 1] = -z; wi[nn] = z;
          }
          nn -= 2;
        } else {
          if (its === 60) throw new Error('eigenvaluesReal: QR iteration did not converge');
          let xs = x, ys = y, ws = w;
          if (its === 10 || its === 20) {
            // exceptional shift
            t += xs;
            for (let i = 0; i <= nn; i++) a[i * n + i] = A(i, i) - xs;
            const s = Math.abs(A(nn, nn - 1)) + Math.abs(A(nn - 1, nn - 2));
            xs = ys = 0.75 * s; ws = -0.4375 * s * s;
          }
          its++;
          let m: number, p = 0, q = 0, r = 0, z: number;
          for (m = nn - 2; m >= l; m--) {
            z = A(m, m);
            const rr = xs - z, ss = ys - z;
            p = (rr * ss - ws) / A(m + 1, m) + A(m, m + 1);
            q = A(m + 1, m + 1) - z - rr - ss;
            r = A(m + 2, m + 1);
            const sc = Math.abs(p) + Math.abs(q) + Math.abs(r);
            p /= sc; q /= sc; r /= sc;
            if (m === l) break;
            const u = Math.abs(A(m, m - 1)) * (Math.abs(q) + Math.abs(r));
            const v = Math.abs(p) * (Math.abs(A(m - 1, m - 1)) + Math.abs(z) + Math.abs(A(m + 1, m + 1)));
            if (u <= eps * v) break;
          }
          for (let i = m + 2; i <= nn; i++) {
            a[i * n + i - 2] = 0;
            if (i !== m + 2) a[i * n + i - 3] = 0;
          }
          for (let k = m; k <= nn - 1; k++) {
            let xk = 0;
            if (k !== m) {
              p = A(k, k - 1); q = A(k + 1, k - 1); r = 0;
              if (k !== nn - 1) r = A(k + 2, k - 1);
              xk = Math.abs(p) + Math.abs(q) + Math.abs(r);
              if (xk !== 0) { p /= xk; q /= xk; r /= xk; }
            }
            const sabs = Math.sqrt(p * p + q * q + r * r);
            const s = p >= 0 ? sabs : -sabs;
            if (s !== 0) {
              if (k === m) { if (l !== m) a[k * n + k - 1] = -A(k, k - 1); }
              else a[k * n + k - 1] = -s * xk;
              p += s;
              const xx = p / s, yy = q / s, zz = r / s;
              q /= p; r /= p;
              for (let j = k; j <= nn; j++) {
                let pp = A(k, j) + q * A(k + 1, j);
                if (k !== nn - 1) { pp += r * A(k + 2, j); a[(k + 2) * n + j] = A(k + 2, j) - pp * zz; }
                a[(k + 1) * n + j] = A(k + 1, j) - pp * yy;
                a[k * n + j] = A(k, j) - pp * xx;
              }
              const mmin = nn < k + 3 ? nn : k + 3;
              for (let i = l; i <= mmin; i++) {
                let pp = xx * A(i, k) + yy * A(i, k + 1);
                if (k !== nn - 1) { pp += zz * A(i, k + 2); a[i * n + k + 2] = A(i, k + 2) - pp * r; }
                a[i * n + k + 1] = A(i, k + 1) - pp * q;
                a[i * n + k] = A(i, k) - pp;
              }
            }
          }
        }
      }
    } while (l < nn - 1);
  }
}


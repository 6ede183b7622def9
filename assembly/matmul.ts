// Matrix products on row-major float32 matrices whose row strides (lda, ldb, ldc) count floats.
// Every N given here is a multiple of 4 (columns are padded to whole SIMD lanes), so a row block
// is 8 columns wide with at most one 4-column block at its end. Rows are blocked by 4, the last
// 1-3 rows go one at a time. Accumulators stay in registers for the whole reduction. Each
// accumulation is `madd`; a row of A is broadcast straight from memory (`v128.load32_splat`, one
// instruction, where a scalar load and a splat were two and held a register).

// @ts-ignore: decorator
@inline function at(base: usize, row: i32, stride: i32, column: i32): usize {
  return base + ((<usize>row * <usize>stride + <usize>column) << 2);
}

/**
 * c + a * b, lane by lane: a multiply then an add in the engine (engine.wasm, plain SIMD); one
 * fused multiply-add in the comparison build the benchmark compiles with --enable relaxed-simd
 * (dist/bench/engine-relaxed.wasm, see developers/training.md, "The training engine"). The choice is made at
 * compile time, so each build holds one instruction sequence only.
 */
// @ts-ignore: decorator
@inline function madd(a: v128, b: v128, c: v128): v128 {
  if (ASC_FEATURE_RELAXED_SIMD) return f32x4.relaxed_madd(a, b, c);
  return f32x4.add(c, f32x4.mul(a, b));
}

// @ts-ignore: decorator
@inline function start(bias: usize, column: i32): v128 {
  return bias == 0 ? f32x4.splat(0) : v128.load(bias + (<usize>column << 2));
}

/** C[M x N] = A[M x K] . B[K x N] (+ bias[N] on every row when bias != 0). */
export function gemm(a: usize, lda: i32, b: usize, ldb: i32, bias: usize, c: usize, ldc: i32, m: i32, k: i32, n: i32): void {
  let i = 0;
  for (; i + 4 <= m; i += 4) {
    const a0 = at(a, i, lda, 0), a1 = at(a, i + 1, lda, 0), a2 = at(a, i + 2, lda, 0), a3 = at(a, i + 3, lda, 0);
    let j = 0;
    for (; j + 8 <= n; j += 8) {
      let c00 = start(bias, j), c01 = start(bias, j + 4);
      let c10 = c00, c11 = c01, c20 = c00, c21 = c01, c30 = c00, c31 = c01;
      let bp = at(b, 0, ldb, j);
      const bStep = <usize>ldb << 2;
      for (let p = 0; p < k; p++) {
        const b0 = v128.load(bp), b1 = v128.load(bp, 16);
        const off = <usize>p << 2;
        const x0 = v128.load32_splat(a0 + off), x1 = v128.load32_splat(a1 + off);
        const x2 = v128.load32_splat(a2 + off), x3 = v128.load32_splat(a3 + off);
        c00 = madd(x0, b0, c00); c01 = madd(x0, b1, c01);
        c10 = madd(x1, b0, c10); c11 = madd(x1, b1, c11);
        c20 = madd(x2, b0, c20); c21 = madd(x2, b1, c21);
        c30 = madd(x3, b0, c30); c31 = madd(x3, b1, c31);
        bp += bStep;
      }
      v128.store(at(c, i, ldc, j), c00); v128.store(at(c, i, ldc, j), c01, 16);
      v128.store(at(c, i + 1, ldc, j), c10); v128.store(at(c, i + 1, ldc, j), c11, 16);
      v128.store(at(c, i + 2, ldc, j), c20); v128.store(at(c, i + 2, ldc, j), c21, 16);
      v128.store(at(c, i + 3, ldc, j), c30); v128.store(at(c, i + 3, ldc, j), c31, 16);
    }
    if (j < n) {
      let c0 = start(bias, j);
      let c1 = c0, c2 = c0, c3 = c0;
      for (let p = 0; p < k; p++) {
        const b0 = v128.load(at(b, p, ldb, j));
        const off = <usize>p << 2;
        c0 = madd(v128.load32_splat(a0 + off), b0, c0);
        c1 = madd(v128.load32_splat(a1 + off), b0, c1);
        c2 = madd(v128.load32_splat(a2 + off), b0, c2);
        c3 = madd(v128.load32_splat(a3 + off), b0, c3);
      }
      v128.store(at(c, i, ldc, j), c0);
      v128.store(at(c, i + 1, ldc, j), c1);
      v128.store(at(c, i + 2, ldc, j), c2);
      v128.store(at(c, i + 3, ldc, j), c3);
    }
  }
  for (; i < m; i++) {
    const a0 = at(a, i, lda, 0);
    for (let j = 0; j < n; j += 4) {
      let c0 = start(bias, j);
      for (let p = 0; p < k; p++) c0 = madd(v128.load32_splat(a0 + (<usize>p << 2)), v128.load(at(b, p, ldb, j)), c0);
      v128.store(at(c, i, ldc, j), c0);
    }
  }
}

/** C[K x N] = A[M x K]^T . B[M x N]: the kernel gradient (inputs transposed times output gradients). */
export function gemmTransposedA(a: usize, lda: i32, b: usize, ldb: i32, c: usize, ldc: i32, m: i32, k: i32, n: i32): void {
  let r = 0;
  const aStep = <usize>lda << 2;
  const bStep = <usize>ldb << 2;
  for (; r + 4 <= k; r += 4) {
    let j = 0;
    for (; j + 8 <= n; j += 8) {
      let c00 = f32x4.splat(0), c01 = c00, c10 = c00, c11 = c00, c20 = c00, c21 = c00, c30 = c00, c31 = c00;
      let ap = at(a, 0, lda, r);
      let bp = at(b, 0, ldb, j);
      for (let p = 0; p < m; p++) {
        const b0 = v128.load(bp), b1 = v128.load(bp, 16);
        const x0 = v128.load32_splat(ap), x1 = v128.load32_splat(ap, 4);
        const x2 = v128.load32_splat(ap, 8), x3 = v128.load32_splat(ap, 12);
        c00 = madd(x0, b0, c00); c01 = madd(x0, b1, c01);
        c10 = madd(x1, b0, c10); c11 = madd(x1, b1, c11);
        c20 = madd(x2, b0, c20); c21 = madd(x2, b1, c21);
        c30 = madd(x3, b0, c30); c31 = madd(x3, b1, c31);
        ap += aStep;
        bp += bStep;
      }
      v128.store(at(c, r, ldc, j), c00); v128.store(at(c, r, ldc, j), c01, 16);
      v128.store(at(c, r + 1, ldc, j), c10); v128.store(at(c, r + 1, ldc, j), c11, 16);
      v128.store(at(c, r + 2, ldc, j), c20); v128.store(at(c, r + 2, ldc, j), c21, 16);
      v128.store(at(c, r + 3, ldc, j), c30); v128.store(at(c, r + 3, ldc, j), c31, 16);
    }
    for (; j < n; j += 4) {
      let c0 = f32x4.splat(0), c1 = c0, c2 = c0, c3 = c0;
      for (let p = 0; p < m; p++) {
        const ap = at(a, p, lda, r);
        const b0 = v128.load(at(b, p, ldb, j));
        c0 = madd(v128.load32_splat(ap), b0, c0);
        c1 = madd(v128.load32_splat(ap, 4), b0, c1);
        c2 = madd(v128.load32_splat(ap, 8), b0, c2);
        c3 = madd(v128.load32_splat(ap, 12), b0, c3);
      }
      v128.store(at(c, r, ldc, j), c0);
      v128.store(at(c, r + 1, ldc, j), c1);
      v128.store(at(c, r + 2, ldc, j), c2);
      v128.store(at(c, r + 3, ldc, j), c3);
    }
  }
  for (; r < k; r++) {
    for (let j = 0; j < n; j += 4) {
      let c0 = f32x4.splat(0);
      for (let p = 0; p < m; p++) c0 = madd(v128.load32_splat(at(a, p, lda, r)), v128.load(at(b, p, ldb, j)), c0);
      v128.store(at(c, r, ldc, j), c0);
    }
  }
}

/** T[cols x ldt] = S[rows x cols]^T for the logical rows x cols block of S, columns rows..ldt of T set to zero. */
export function transpose(s: usize, lds: i32, t: usize, ldt: i32, rows: i32, cols: i32): void {
  for (let c = 0; c < cols; c++) {
    const out = at(t, c, ldt, 0);
    let r = 0;
    for (; r < rows; r++) store<f32>(out + (<usize>r << 2), load<f32>(at(s, r, lds, c)));
    for (; r < ldt; r++) store<f32>(out + (<usize>r << 2), 0);
  }
}

/** sums[N] = column sums of D[M x N] (the bias gradient). */
export function columnSums(d: usize, ldd: i32, sums: usize, m: i32, n: i32): void {
  for (let j = 0; j < n; j += 4) {
    let s = f32x4.splat(0);
    for (let i = 0; i < m; i++) s = f32x4.add(s, v128.load(at(d, i, ldd, j)));
    v128.store(sums + (<usize>j << 2), s);
  }
}

// AssemblyScript source of the WebAssembly kernels (compiled by `npm run build:kernels`, see DEVELOPERS.md).
// Not TypeScript: f64/i32/usize, load/store on raw linear memory. Every pointer is a byte offset into the
// memory that the host (solver/kernels/wasm.ts) fills with the mesh arrays, coefficients and work arrays of one
// model. The arithmetic of every output entry, operation order included, is that of the TypeScript kernels they
// replace (solver/model/terms.ts, linear.ts, restriction.ts, jacobian.ts, problem.ts, solver/mesh/operators.ts),
// so results agree to round-off.
//
// Stencils of variable length (cell → edges, edge → tangential edges) arrive padded to a fixed width W per row:
// index arrays repeat a valid index and coefficient arrays hold 0 in the padding. Stencil index arrays hold byte
// offsets (8 × element index, 8P × entity for layer-interleaved arrays) or, where one array is gathered from,
// absolute byte addresses, so that a gather is one load with an immediate offset. Layered kernels run the layers
// in blocks of three lanes over layer-interleaved arrays (stride P = L rounded up to a multiple of 3), lanes 0 and 1
// as one f64x2 operation and lane 2 as a scalar one; the PV flux runs pairs of edges as the two f64x2 lanes.
// SIMD here is lane-wise only: each lane does the scalar loop's operations in the scalar loop's order (no
// reassociation, no fused multiply-add). Hand-unrolled stencil loops were measured no faster (V8 spilled the
// hoisted loads), so the loops are plain.

@inline function ld(p: usize, i: i32): f64 { return load<f64>(p + (<usize>i << 3)); }
@inline function li(p: usize, i: i32): i32 { return load<i32>(p + (<usize>i << 2)); }
@inline function st(p: usize, i: i32, v: f64): void { store<f64>(p + (<usize>i << 3), v); }
@inline function at(p: usize, byteOffset: i32): f64 { return load<f64>(p + <usize>byteOffset); }
@inline function lane(k: i32, j: i32, nLayers: i32): i32 { return k + j < nLayers ? k + j : nLayers - 1; }

// ---------------------------------------------------------------------------------------------------------
// Tendency: four fused passes over all layers, in blocks of three lanes (see terms.ts for the equations).
// Work arrays are layer-interleaved with stride P (L rounded up to a multiple of 3): [P·entity + k].

export function vertexPotentialVorticity(
  qV: usize, x: usize, nv: i32, nc: i32, ne: i32, uOffset: i32, L: i32, P: i32,
  ve: usize, vc: usize, cc: usize, kf: usize, vi: usize, cor: usize,
): void {
  for (let kb = 0; kb < L; kb += 3) {
    const k1 = lane(kb, 1, L), k2 = lane(kb, 2, L);
    const u0 = x + (<usize>(uOffset + kb * ne) << 3), u1 = x + (<usize>(uOffset + k1 * ne) << 3), u2 = x + (<usize>(uOffset + k2 * ne) << 3);
    const h0 = x + (<usize>(kb * nc) << 3), h1 = x + (<usize>(k1 * nc) << 3), h2 = x + (<usize>(k2 * nc) << 3);
    for (let v = 0; v < nv; v++) {
      const j = 3 * v;
      const ca = li(vc, j), cb = li(vc, j + 1), cd = li(vc, j + 2);
      const fa = ld(kf, j), fb = ld(kf, j + 1), fd = ld(kf, j + 2);
      const f = ld(cor, v);
      let z0: f64 = 0, z1: f64 = 0, z2: f64 = 0;
      if (load<u8>(vi + <usize>v) != 0) {
        const ea = li(ve, j), eb = li(ve, j + 1), ed = li(ve, j + 2);
        const aa = ld(cc, j), ab = ld(cc, j + 1), ad = ld(cc, j + 2);
        z0 = aa * ld(u0, ea) + ab * ld(u0, eb) + ad * ld(u0, ed);
        z1 = aa * ld(u1, ea) + ab * ld(u1, eb) + ad * ld(u1, ed);
        z2 = aa * ld(u2, ea) + ab * ld(u2, eb) + ad * ld(u2, ed);
      }
      const o = P * v + kb;
      st(qV, o, (z0 + f) / (fa * ld(h0, ca) + fb * ld(h0, cb) + fd * ld(h0, cd)));
      st(qV, o + 1, (z1 + f) / (fa * ld(h1, ca) + fb * ld(h1, cb) + fd * ld(h1, cd)));
      st(qV, o + 2, (z2 + f) / (fa * ld(h2, ca) + fb * ld(h2, cb) + fd * ld(h2, cd)));
    }
  }
}

export function edgeFluxAndPv(
  flux: usize, qE: usize, fq: usize, x: usize, ne: i32, nc: i32, uOffset: i32, L: i32, P: i32, ec: usize, ev: usize, qV: usize,
): void {
  for (let kb = 0; kb < L; kb += 3) {
    const k1 = lane(kb, 1, L), k2 = lane(kb, 2, L);
    const u0 = x + (<usize>(uOffset + kb * ne) << 3), u1 = x + (<usize>(uOffset + k1 * ne) << 3), u2 = x + (<usize>(uOffset + k2 * ne) << 3);
    const h0 = x + (<usize>(kb * nc) << 3), h1 = x + (<usize>(k1 * nc) << 3), h2 = x + (<usize>(k2 * nc) << 3);
    for (let e = 0; e < ne; e++) {
      const ca = li(ec, 2 * e), cb = li(ec, 2 * e + 1);
      const va = P * li(ev, 2 * e) + kb, vb = P * li(ev, 2 * e + 1) + kb;
      const o = P * e + kb;
      const F0 = 0.5 * (ld(h0, ca) + ld(h0, cb)) * ld(u0, e);
      const F1 = 0.5 * (ld(h1, ca) + ld(h1, cb)) * ld(u1, e);
      const F2 = 0.5 * (ld(h2, ca) + ld(h2, cb)) * ld(u2, e);
      const q0 = 0.5 * (ld(qV, va) + ld(qV, vb));
      const q1 = 0.5 * (ld(qV, va + 1) + ld(qV, vb + 1));
      const q2 = 0.5 * (ld(qV, va + 2) + ld(qV, vb + 2));
      st(flux, o, F0); st(flux, o + 1, F1); st(flux, o + 2, F2);
      st(qE, o, q0); st(qE, o + 1, q1); st(qE, o + 2, q2);
      st(fq, o, F0 * q0); st(fq, o + 1, F1 * q1); st(fq, o + 2, F2 * q2);
    }
  }
}

/** Cell pass: continuity into out[k·nc + i], Bernoulli function B = K + M into bern[P·i + k]. Stencil width W. */
export function cellContinuityBernoulli(
  out: usize, bern: usize, x: usize, nc: i32, ne: i32, uOffset: i32, L: i32, P: i32, W: i32,
  idx: usize, dcf: usize, kcf: usize, bottom: usize, rg: usize, flux: usize,
): void {
  for (let i = 0; i < nc; i++) {
    const o = P * i;
    let level = ld(bottom, i);
    for (let k = L - 1; k >= 0; k--) {
      level += ld(x, k * nc + i);
      st(bern, o + k, level);
    }
    let pot: f64 = 0;
    for (let k = 0; k < L; k++) {
      pot += ld(rg, k) * ld(bern, o + k);
      st(bern, o + k, pot);
    }
    for (let k = L; k < P; k++) st(bern, o + k, pot);
  }
  for (let kb = 0; kb < L; kb += 3) {
    const k1 = lane(kb, 1, L), k2 = lane(kb, 2, L);
    const u0 = x + (<usize>(uOffset + kb * ne) << 3), u1 = x + (<usize>(uOffset + k1 * ne) << 3), u2 = x + (<usize>(uOffset + k2 * ne) << 3);
    const fl = flux + (<usize>kb << 3);
    for (let i = 0; i < nc; i++) {
      let d0: f64 = 0, d1: f64 = 0, d2: f64 = 0, K0: f64 = 0, K1: f64 = 0, K2: f64 = 0;
      const q0 = W * i;
      for (let q = q0; q < q0 + W; q++) {
        const e = li(idx, q);
        const pf = fl + <usize>(P * e);
        const c = ld(dcf, q);
        const w = ld(kcf, q);
        const a0 = at(u0, e), a1 = at(u1, e), a2 = at(u2, e);
        d0 += c * load<f64>(pf); d1 += c * load<f64>(pf, 8); d2 += c * load<f64>(pf, 16);
        K0 += w * a0 * a0; K1 += w * a1 * a1; K2 += w * a2 * a2;
      }
      st(out, kb * nc + i, -d0); st(out, k1 * nc + i, -d1); st(out, k2 * nc + i, -d2);
      const o = P * i + kb;
      st(bern, o, ld(bern, o) + K0); st(bern, o + 1, ld(bern, o + 1) + K1); st(bern, o + 2, ld(bern, o + 2) + K2);
    }
  }
}

/** Edge momentum pass: PV flux and Bernoulli gradient into out[uOffset + k·ne + e]. Stencil width W. */
export function edgeMomentum(
  out: usize, ne: i32, uOffset: i32, L: i32, P: i32, W: i32,
  ec: usize, open: usize, inv: usize, slot: usize, tw: usize, flux: usize, qE: usize, fq: usize, bern: usize,
): void {
  for (let kb = 0; kb < L; kb += 3) {
    const k1 = lane(kb, 1, L), k2 = lane(kb, 2, L);
    const o0 = out + (<usize>(uOffset + kb * ne) << 3), o1 = out + (<usize>(uOffset + k1 * ne) << 3), o2 = out + (<usize>(uOffset + k2 * ne) << 3);
    const fl = flux + (<usize>kb << 3), gl = fq + (<usize>kb << 3);
    // lanes 0 and 1 as f64x2, lane 2 scalar (each lane the loop's sum in the loop's order)
    for (let e = 0; e < ne; e++) {
      if (load<u8>(open + <usize>e) == 0) { st(o0, e, 0); st(o1, e, 0); st(o2, e, 0); continue; }
      let a01 = f64x2.splat(0), g01 = f64x2.splat(0);
      let a2: f64 = 0, g2: f64 = 0;
      let ps = slot + (<usize>(W * e) << 2), pw = tw + (<usize>(W * e) << 3);
      const end = ps + (<usize>W << 2);
      while (ps < end) {
        const j = <usize>load<i32>(ps), c = load<f64>(pw), cc = f64x2.splat(c);
        const pf = fl + j, pg = gl + j;
        a01 = f64x2.add(a01, f64x2.mul(cc, v128.load(pf)));
        g01 = f64x2.add(g01, f64x2.mul(cc, v128.load(pg)));
        a2 += c * load<f64>(pf, 16);
        g2 += c * load<f64>(pg, 16);
        ps += 4; pw += 8;
      }
      momentumStore(o0, o1, o2, e, P, kb, f64x2.extract_lane(a01, 0), f64x2.extract_lane(a01, 1), a2,
        f64x2.extract_lane(g01, 0), f64x2.extract_lane(g01, 1), g2, ec, inv, qE, bern);
    }
  }
}

@inline function momentumStore(
  o0: usize, o1: usize, o2: usize, e: i32, P: i32, kb: i32, a0: f64, a1: f64, a2: f64, g0: f64, g1: f64, g2: f64,
  ec: usize, inv: usize, qE: usize, bern: usize,
): void {
  const o = P * e + kb;
  const b1 = P * li(ec, 2 * e) + kb, b2 = P * li(ec, 2 * e + 1) + kb;
  const id = ld(inv, e);
  st(o0, e, 0.5 * (ld(qE, o) * a0 + g0) - (ld(bern, b2) - ld(bern, b1)) * id);
  st(o1, e, 0.5 * (ld(qE, o + 1) * a1 + g1) - (ld(bern, b2 + 1) - ld(bern, b1 + 1)) * id);
  st(o2, e, 0.5 * (ld(qE, o + 2) * a2 + g2) - (ld(bern, b2 + 2) - ld(bern, b1 + 2)) * id);
}

// ---------------------------------------------------------------------------------------------------------
// Single-layer wave operators: the modal operator of restriction.ts with one mode per block (diagonal blocks),
// and the rest-state operator of linear.ts layer by layer.

@inline function cellSum(dd: usize, ci: usize, u: usize, q0: i32, W: i32): f64 {
  let acc: f64 = 0;
  for (let q = q0; q < q0 + W; q++) acc += ld(dd, q) * at(u, li(ci, q));
  return acc;
}

/** Σ_j c[t0 + j]·f[j-th address], W slots from slot t0: `pi` the absolute byte addresses, `pc` the coefficients. */
@inline function gatherSum(pc: usize, pi: usize, t0: i32, W: i32): f64 {
  let acc: f64 = 0;
  let c = pc + (<usize>t0 << 3), i = pi + (<usize>t0 << 2);
  const end = i + (<usize>W << 2);
  while (i < end) {
    acc += load<f64>(c) * load<f64>(<usize>load<i32>(i));
    c += 8; i += 4;
  }
  return acc;
}

/**
 * One mode of the diagonal modal operator: velocity out_u[e] = Σ cor·u + gd[2e] h[c1] + gd[2e+1] h[c2] on open
 * edges (0 on coastline edges), thickness out_h[i] = Σ div·u. `outU`, `outH` point at the mode's output blocks;
 * the stencil indices are absolute byte addresses of the mode's input blocks (`ti`, `ci` into u, `ec` into h).
 */
export function modalDiagonal(
  outH: usize, outU: usize, nc: i32, ne: i32, WT: i32, WC: i32,
  cor: usize, gd: usize, dd: usize, ti: usize, ec: usize, open: usize, ci: usize,
): void {
  for (let e = 0; e < ne; e++) {
    if (load<u8>(open + <usize>e) == 0) { st(outU, e, 0); continue; }
    let acc = gatherSum(cor, ti, WT * e, WT);
    acc += ld(gd, 2 * e) * load<f64>(<usize>li(ec, 2 * e)) + ld(gd, 2 * e + 1) * load<f64>(<usize>li(ec, 2 * e + 1));
    st(outU, e, acc);
  }
  for (let i = 0; i < nc; i++) st(outH, i, gatherSum(dd, ci, WC * i, WC));
}

/**
 * Two coupled modes (m×m blocks [slot·4 + a·2 + b]): the m = 2 path of the modal operator over topography.
 * `y` and `out` are whole modal vectors (thickness blocks at 0 and nc, velocity blocks at 2nc and 2nc + ne).
 */
export function modalTwo(
  out: usize, y: usize, nc: i32, ne: i32, WT: i32, WC: i32,
  cb: usize, gb: usize, db: usize, ti: usize, ec: usize, open: usize, ci: usize,
): void {
  const mOffset = 2 * nc;
  const u0 = y + (<usize>mOffset << 3), u1 = y + (<usize>(mOffset + ne) << 3);
  const o0 = out + (<usize>mOffset << 3), o1 = out + (<usize>(mOffset + ne) << 3);
  for (let e = 0; e < ne; e++) {
    if (load<u8>(open + <usize>e) == 0) { st(o0, e, 0); st(o1, e, 0); continue; }
    let acc0: f64 = 0, acc1: f64 = 0;
    for (let q = WT * e; q < WT * e + WT; q++) {
      const e2 = li(ti, q), blk = 4 * q;
      const y0 = at(u0, e2), y1 = at(u1, e2);
      acc0 += ld(cb, blk) * y0 + ld(cb, blk + 1) * y1;
      acc1 += ld(cb, blk + 2) * y0 + ld(cb, blk + 3) * y1;
    }
    const c1 = li(ec, 2 * e), c2 = li(ec, 2 * e + 1), g1 = 8 * e, g2 = 8 * e + 4;
    const h10 = ld(y, c1), h11 = ld(y, nc + c1), h20 = ld(y, c2), h21 = ld(y, nc + c2);
    st(o0, e, acc0 + ld(gb, g1) * h10 + ld(gb, g1 + 1) * h11 + ld(gb, g2) * h20 + ld(gb, g2 + 1) * h21);
    st(o1, e, acc1 + ld(gb, g1 + 2) * h10 + ld(gb, g1 + 3) * h11 + ld(gb, g2 + 2) * h20 + ld(gb, g2 + 3) * h21);
  }
  for (let i = 0; i < nc; i++) {
    let acc0: f64 = 0, acc1: f64 = 0;
    for (let q = WC * i; q < WC * i + WC; q++) {
      const e = li(ci, q), blk = 4 * q;
      const y0 = at(u0, e), y1 = at(u1, e);
      acc0 += ld(db, blk) * y0 + ld(db, blk + 1) * y1;
      acc1 += ld(db, blk + 2) * y0 + ld(db, blk + 3) * y1;
    }
    st(out, i, acc0);
    st(out, nc + i, acc1);
  }
}

/**
 * Velocities of a layer-major state into a layer-interleaved copy uI[P·e + k] (lanes k ≥ L repeat the last layer),
 * so that one stencil address serves every layer of a block: lanes at +0, +8, +16 bytes.
 */
@inline function interleaveLayers(uI: usize, src: usize, n: i32, L: i32, P: i32): void {
  for (let k = 0; k < P; k++) {
    const s = src + (<usize>((k < L ? k : L - 1) * n) << 3), d = uI + (<usize>k << 3), stride = <usize>P << 3;
    for (let e = 0; e < n; e++) store<f64>(d + <usize>e * stride, ld(s, e));
  }
}

/** M'_k = Σ_j 𝒢_kj h'_j per cell into `mont` [P·i + k] (lanes ≥ L repeat the last layer; L = 3 unrolled; the loop's order). */
@inline function montgomery(mont: usize, x: usize, nc: i32, L: i32, P: i32, G: usize): void {
  if (L == 3 && P == 3) {
    const g00 = ld(G, 0), g01 = ld(G, 1), g02 = ld(G, 2), g10 = ld(G, 3), g11 = ld(G, 4), g12 = ld(G, 5), g20 = ld(G, 6), g21 = ld(G, 7), g22 = ld(G, 8);
    const x1 = x + (<usize>nc << 3), x2 = x + (<usize>(2 * nc) << 3);
    for (let i = 0; i < nc; i++) {
      const a = ld(x, i), b = ld(x1, i), c = ld(x2, i);
      const o = mont + <usize>(24 * i);
      store<f64>(o, g00 * a + g01 * b + g02 * c);
      store<f64>(o, g10 * a + g11 * b + g12 * c, 8);
      store<f64>(o, g20 * a + g21 * b + g22 * c, 16);
    }
    return;
  }
  for (let i = 0; i < nc; i++) {
    for (let k = 0; k < P; k++) {
      const kk = k < L ? k : L - 1;
      let s: f64 = 0;
      for (let j = 0; j < L; j++) s += ld(G, kk * L + j) * ld(x, j * nc + i);
      st(mont, P * i + k, s);
    }
  }
}

/**
 * The rest-state operator of linear.ts: M' = 𝒢 h' per cell, then per layer the Coriolis term with rest PV minus
 * the Montgomery gradient on open edges, and the continuity −D(Ĥ_k u_k); out and x layer-major.
 * Layers go in blocks of three lanes over layer-interleaved arrays (stride P, L rounded up to a multiple of 3):
 * velocities uI [P·e + k] and M' `mont` [P·i + k] (work), coefficients `cor` [P·(WT·e + j) + k] and
 * `cont` [P·(WC·i + j) + k] (padded stencils). Stencil indices are absolute byte addresses of lane 0 of layer 0:
 * `ti`, `ci` into uI, `ecM` (the two cells of each edge) into mont. Lanes 0 and 1 of a block run as one f64x2
 * operation, lane 2 as a scalar one; every lane is the loop's sum in the loop's order.
 */
export function restOperator(
  out: usize, x: usize, nc: i32, ne: i32, L: i32, P: i32, WT: i32, WC: i32,
  G: usize, mont: usize, uI: usize, cor: usize, cont: usize, inv: usize, ti: usize, ecM: usize, open: usize, ci: usize,
): void {
  const uOffset = L * nc;
  interleaveLayers(uI, x + (<usize>uOffset << 3), ne, L, P);
  montgomery(mont, x, nc, L, P, G);
  const slotT = <usize>P << 3;
  for (let kb = 0; kb < P; kb += 3) {
    const k0 = kb < L ? kb : L - 1, k1 = lane(kb, 1, L), k2 = lane(kb, 2, L), lo = <usize>kb << 3;
    const o0 = out + (<usize>(uOffset + k0 * ne) << 3), o1 = out + (<usize>(uOffset + k1 * ne) << 3), o2 = out + (<usize>(uOffset + k2 * ne) << 3);
    for (let e = 0; e < ne; e++) {
      if (load<u8>(open + <usize>e) == 0) { st(o0, e, 0); st(o1, e, 0); st(o2, e, 0); continue; }
      let a01 = f64x2.splat(0);
      let a2: f64 = 0;
      const t0 = WT * e;
      let pi = ti + (<usize>t0 << 2), pc = cor + <usize>t0 * slotT + lo;
      for (let q = 0; q < WT; q++) {
        const j = <usize>load<i32>(pi) + lo;
        a01 = f64x2.add(a01, f64x2.mul(v128.load(pc), v128.load(j)));
        a2 += load<f64>(pc, 16) * load<f64>(j, 16);
        pi += 4; pc += slotT;
      }
      const cA = <usize>li(ecM, 2 * e) + lo, cB = <usize>li(ecM, 2 * e + 1) + lo, id = ld(inv, e);
      st(o0, e, f64x2.extract_lane(a01, 0) - (load<f64>(cB) - load<f64>(cA)) * id);
      st(o1, e, f64x2.extract_lane(a01, 1) - (load<f64>(cB, 8) - load<f64>(cA, 8)) * id);
      st(o2, e, a2 - (load<f64>(cB, 16) - load<f64>(cA, 16)) * id);
    }
    const h0 = out + (<usize>(k0 * nc) << 3), h1 = out + (<usize>(k1 * nc) << 3), h2 = out + (<usize>(k2 * nc) << 3);
    for (let i = 0; i < nc; i++) {
      let a01 = f64x2.splat(0);
      let a2: f64 = 0;
      const q0 = WC * i;
      let pi = ci + (<usize>q0 << 2), pc = cont + <usize>q0 * slotT + lo;
      for (let q = 0; q < WC; q++) {
        const j = <usize>load<i32>(pi) + lo;
        a01 = f64x2.add(a01, f64x2.mul(v128.load(pc), v128.load(j)));
        a2 += load<f64>(pc, 16) * load<f64>(j, 16);
        pi += 4; pc += slotT;
      }
      st(h0, i, f64x2.extract_lane(a01, 0)); st(h1, i, f64x2.extract_lane(a01, 1)); st(h2, i, a2);
    }
  }
}

// ---------------------------------------------------------------------------------------------------------
// Single-field mesh operators of solver/mesh/operators.ts and terms.ts (the stencils of a barotropic sub-step),
// in their operation order: gradient, divergence, PV flux.

/**
 * Σ_q (s_q l_q) F_q / A_i for cells in pairs (i, i + 1) as the two f64x2 lanes (each lane the loop's order), negated
 * when `negate`. Stencils in pair layout (see pvFluxPairs): `ci2` absolute addresses of F, `sl2` s·l per slot. An odd
 * last cell is stored from lane 0 only.
 */
@inline function divergencePairs(out: usize, nc: i32, W: i32, ci2: usize, sl2: usize, area: usize, negate: bool): void {
  for (let i = 0; i < nc; i += 2) {
    const i1 = i + 1 < nc ? i + 1 : i;
    let acc = f64x2.splat(0);
    let pi = ci2 + (<usize>(W * i) << 2), pc = sl2 + (<usize>(W * i) << 3);
    const end = pi + (<usize>W << 3);
    while (pi < end) {
      const ja = <usize>load<i32>(pi), jb = <usize>load<i32>(pi, 4);
      acc = f64x2.add(acc, f64x2.mul(v128.load(pc), v128.load64_lane(jb, v128.load64_zero(ja), 1)));
      pi += 8; pc += 16;
    }
    let r = f64x2.div(acc, v128.load64_lane(area + (<usize>i1 << 3), v128.load64_zero(area + (<usize>i << 3)), 1));
    if (negate) r = f64x2.neg(r);
    st(out, i, f64x2.extract_lane(r, 0));
    if (i + 1 < nc) st(out, i + 1, f64x2.extract_lane(r, 1));
  }
}

/**
 * scale · (φ[c2] − φ[c1]) / d_e on open edges, scale · 0 on coastline edges, for edges in pairs as the two f64x2
 * lanes; `ec` [2e], [2e + 1] the absolute addresses of φ at the edge's two cells.
 */
@inline function gradientPairs(out: usize, ne: i32, ec: usize, dc: usize, open: usize, scale: f64, scaled: bool): void {
  for (let e = 0; e < ne; e += 2) {
    const e1 = e + 1 < ne ? e + 1 : e;
    const pa = ec + (<usize>e << 3), pb = ec + (<usize>e1 << 3);
    const hi = v128.load64_lane(<usize>load<i32>(pb, 4), v128.load64_zero(<usize>load<i32>(pa, 4)), 1);
    const lo = v128.load64_lane(<usize>load<i32>(pb), v128.load64_zero(<usize>load<i32>(pa)), 1);
    const g = f64x2.div(f64x2.sub(hi, lo), v128.load64_lane(dc + (<usize>e1 << 3), v128.load64_zero(dc + (<usize>e << 3)), 1));
    const g0 = load<u8>(open + <usize>e) != 0 ? f64x2.extract_lane(g, 0) : 0;
    st(out, e, scaled ? scale * g0 : g0);
    if (e + 1 < ne) {
      const g1 = load<u8>(open + <usize>(e + 1)) != 0 ? f64x2.extract_lane(g, 1) : 0;
      st(out, e + 1, scaled ? scale * g1 : g1);
    }
  }
}

/** out[e] = (φ[c2] − φ[c1]) / d_e on open edges, 0 on coastline edges; `ec` holds the absolute addresses of φ[c]. */
export function gradient(out: usize, ne: i32, ec: usize, dc: usize, open: usize): void {
  gradientPairs(out, ne, ec, dc, open, 1, false);
}

/** out[i] = (Σ_q (s_q l_q) F_q) / A_i; `sl2` holds s_q·l_q per padded slot, `ci2` the absolute addresses of F (pair layout). */
export function divergence(out: usize, nc: i32, W: i32, ci2: usize, sl2: usize, area: usize): void {
  divergencePairs(out, nc, W, ci2, sl2, area, false);
}

/**
 * PV flux of edges in pairs (e, e + 1) as the two lanes of f64x2: ½ Σ_j W_j T_j (q_e + q_j) per edge, each lane the
 * loop's sum in the loop's order. `fq` [2e] = T_e, [2e + 1] = q_e; stencils in pair layout, slot j of pair p at
 * 2(W·p + j) + lane: `ti2` absolute addresses of fq entries, `tw2` coefficients (an odd last pair repeats its edge in
 * lane 1 and stores lane 0 only). 0 on coastline edges.
 */
@inline function pvFluxPairs(out: usize, fq: usize, ne: i32, W: i32, ti2: usize, tw2: usize, open: usize): void {
  const half = f64x2.splat(0.5);
  for (let e = 0; e < ne; e += 2) {
    const e1 = e + 1 < ne ? e + 1 : e;
    const pq = fq + (<usize>e << 4), pq1 = fq + (<usize>e1 << 4);
    const qe = v128.load64_lane(pq1, v128.load64_zero(pq, 8), 1, 8);
    let acc = f64x2.splat(0);
    let pi = ti2 + (<usize>(W * e) << 2), pc = tw2 + (<usize>(W * e) << 3);
    const end = pi + (<usize>W << 3);
    while (pi < end) {
      const ja = <usize>load<i32>(pi), jb = <usize>load<i32>(pi, 4);
      const A = v128.load(ja), B = v128.load(jb); // (T, q) of each lane's tap
      const F = v128.shuffle<f64>(A, B, 0, 2), q = v128.shuffle<f64>(A, B, 1, 3);
      acc = f64x2.add(acc, f64x2.mul(f64x2.mul(v128.load(pc), F), f64x2.add(qe, q)));
      pi += 8; pc += 16;
    }
    const r = f64x2.mul(half, acc);
    st(out, e, load<u8>(open + <usize>e) != 0 ? f64x2.extract_lane(r, 0) : 0);
    if (e + 1 < ne) st(out, e + 1, load<u8>(open + <usize>(e + 1)) != 0 ? f64x2.extract_lane(r, 1) : 0);
  }
}

/**
 * out[e] = ½ Σ_{e'} W_{e,e'} (l_{e'}/d_e) F_{e'} (q_e + q_{e'}) on open edges, 0 on coastline edges. F and q are
 * first interleaved into `fq` [2e] = F_e, [2e + 1] = q_e, so that one stencil address (`ti`, absolute into fq) reads both.
 */
export function pvFlux(out: usize, flux: usize, q: usize, fq: usize, ne: i32, W: i32, ti2: usize, tw2: usize, open: usize): void {
  for (let e = 0; e < ne; e++) {
    const d = fq + (<usize>e << 4);
    store<f64>(d, ld(flux, e));
    store<f64>(d, ld(q, e), 8);
  }
  pvFluxPairs(out, fq, ne, W, ti2, tw2, open);
}

// ---------------------------------------------------------------------------------------------------------
// The barotropic operators of the fast/slow split (solver/model/problem.ts), each one call per sub-step stencil,
// in the operation order of the TypeScript they replace: transport T = Ĥ ū (Ĥ frozen), then the stencil.
// `hq` [2e] = T_e (written by the call), [2e + 1] = q_e (the frozen edge PV, written by the host at freeze);
// stencil indices are absolute byte addresses of slot 2e of hq (`ti`, `ci`) or of the cell input (`ec`).

@inline function barotropicTransport(hq: usize, u: usize, H: usize, ne: i32): void {
  for (let e = 0; e < ne; e++) store<f64>(hq + (<usize>e << 4), ld(H, e) * ld(u, e));
}

/** out[e] = ½ Σ_{e'} W_{e,e'} (l_{e'}/d_e) T_{e'} (q_e + q_{e'}) on open edges, 0 on coastline edges. */
export function barotropicCoriolis(out: usize, u: usize, H: usize, hq: usize, ne: i32, W: i32, ti2: usize, tw2: usize, open: usize): void {
  barotropicTransport(hq, u, H, ne);
  pvFluxPairs(out, hq, ne, W, ti2, tw2, open);
}

/** out[i] = −(Σ_q (s_q l_q) T_q) / A_i, the surface tendency −D(Ĥ ū). */
export function barotropicSurface(out: usize, u: usize, H: usize, hq: usize, nc: i32, ne: i32, W: i32, ci2: usize, sl2: usize, area: usize): void {
  barotropicTransport(hq, u, H, ne);
  divergencePairs(out, nc, W, ci2, sl2, area, true);
}

/** out[e] = (−g) · ((η[c2] − η[c1]) / d_e) on open edges, (−g) · 0 on coastline edges; `ec` absolute addresses of η. */
export function barotropicPressure(out: usize, ne: i32, negG: f64, ec: usize, dc: usize, open: usize): void {
  gradientPairs(out, ne, ec, dc, open, negG, true);
}

// ---------------------------------------------------------------------------------------------------------
// Jacobian-vector product of the inviscid, unforced tendency about x̄ (solver/model/jacobian.ts, same order per
// entry); wind, drag and viscosity are added by the host afterwards. Layers go in blocks of three lanes over
// layer-interleaved arrays (stride P, entry [P·entity + k]): the linearization point (ubI = ū, hEI = ĥ̄, fI = F̄,
// qEI = q̄_e per edge; hVI = h̄_v, qVI = q̄_v per vertex), filled from the host's layer-major arrays by
// `jacobianPrepare`, and the work arrays hI, uI (the input), dM, dF (δF), dK, dqV, dqE. Stencil indices are byte
// offsets of entity 0's lane 0 (8P × entity): `ec` cells of an edge, `ev` vertices of an edge, `ci` edges of a cell
// (padded, width WC), `ve` edges and `vc` (clamped) cells of a vertex, `ti` tangential edges (padded, width WT).
// Per padded cell slot: sl = s·l_e, lk = l_e d_e; per vertex slot: vsd = t·d_e, ka = kite area.

/** The linearization point's interleaved copies, from the layer-major arrays the host's setState filled. */
export function jacobianPrepare(
  ne: i32, nv: i32, L: i32, P: i32, uOffset: i32, xBar: usize, hEdge: usize, flux: usize, hVert: usize, qVert: usize, qEdge: usize,
  ubI: usize, hEI: usize, fI: usize, qEI: usize, hVI: usize, qVI: usize,
): void {
  interleaveLayers(ubI, xBar + (<usize>uOffset << 3), ne, L, P);
  interleaveLayers(hEI, hEdge, ne, L, P);
  interleaveLayers(fI, flux, ne, L, P);
  interleaveLayers(qEI, qEdge, ne, L, P);
  interleaveLayers(hVI, hVert, nv, L, P);
  interleaveLayers(qVI, qVert, nv, L, P);
}

export function jacobianApply(
  out: usize, x: usize, nc: i32, ne: i32, nv: i32, L: i32, P: i32, WC: i32, WT: i32, G: usize,
  hI: usize, uI: usize, dM: usize, dF: usize, dK: usize, dqV: usize, dqE: usize,
  ubI: usize, hEI: usize, fI: usize, qEI: usize, hVI: usize, qVI: usize,
  ec: usize, ev: usize, open: usize, dc: usize, area: usize, ci: usize, sl: usize, lk: usize,
  ve: usize, vsd: usize, vc: usize, ka: usize, vArea: usize, vi: usize, ti: usize, tw: usize,
): void {
  const uOffset = L * nc;
  interleaveLayers(hI, x, nc, L, P);
  interleaveLayers(uI, x + (<usize>uOffset << 3), ne, L, P);
  montgomery(dM, x, nc, L, P, G);
  const sE = <usize>P << 3; // bytes per entity of an interleaved array
  for (let kb = 0; kb < P; kb += 3) {
    const k0 = kb < L ? kb : L - 1, k1 = lane(kb, 1, L), k2 = lane(kb, 2, L), lo = <usize>kb << 3;
    const oh0 = out + (<usize>(k0 * nc) << 3), oh1 = out + (<usize>(k1 * nc) << 3), oh2 = out + (<usize>(k2 * nc) << 3);
    const ou0 = out + (<usize>(uOffset + k0 * ne) << 3), ou1 = out + (<usize>(uOffset + k1 * ne) << 3), ou2 = out + (<usize>(uOffset + k2 * ne) << 3);
    const h = hI + lo, u = uI + lo, M = dM + lo, F = dF + lo, K = dK + lo, qv = dqV + lo, qe = dqE + lo;
    const ub = ubI + lo, hE = hEI + lo, fB = fI + lo, qB = qEI + lo, hV = hVI + lo, qVb = qVI + lo;
    // δF = δĥ ū + ĥ̄ δu
    for (let e = 0; e < ne; e++) {
      const a = h + <usize>li(ec, 2 * e), b = h + <usize>li(ec, 2 * e + 1), o = <usize>e * sE;
      const d0 = 0.5 * (load<f64>(a) + load<f64>(b)), d1 = 0.5 * (load<f64>(a, 8) + load<f64>(b, 8)), d2 = 0.5 * (load<f64>(a, 16) + load<f64>(b, 16));
      store<f64>(F + o, d0 * load<f64>(ub + o) + load<f64>(hE + o) * load<f64>(u + o));
      store<f64>(F + o, d1 * load<f64>(ub + o, 8) + load<f64>(hE + o, 8) * load<f64>(u + o, 8), 8);
      store<f64>(F + o, d2 * load<f64>(ub + o, 16) + load<f64>(hE + o, 16) * load<f64>(u + o, 16), 16);
    }
    // continuity −D δF, and δK_i = (1/2A_i) Σ l_e d_e ū_e δu_e
    for (let i = 0; i < nc; i++) {
      // lanes 0 and 1 as f64x2, lane 2 scalar (each lane the loop's sum in the loop's order)
      let s01 = f64x2.splat(0), t01 = f64x2.splat(0);
      let s2: f64 = 0, t2: f64 = 0;
      for (let q = WC * i; q < WC * i + WC; q++) {
        const j = <usize>li(ci, q), c = ld(sl, q), w = ld(lk, q);
        const pf = F + j, pb = ub + j, pu = u + j;
        s01 = f64x2.add(s01, f64x2.mul(f64x2.splat(c), v128.load(pf)));
        t01 = f64x2.add(t01, f64x2.mul(f64x2.mul(f64x2.splat(w), v128.load(pb)), v128.load(pu)));
        s2 += c * load<f64>(pf, 16);
        t2 += w * load<f64>(pb, 16) * load<f64>(pu, 16);
      }
      const A = ld(area, i), o = <usize>i * sE;
      const s0 = f64x2.extract_lane(s01, 0), s1 = f64x2.extract_lane(s01, 1), t0 = f64x2.extract_lane(t01, 0), t1 = f64x2.extract_lane(t01, 1);
      st(oh0, i, -s0 / A); st(oh1, i, -s1 / A); st(oh2, i, -s2 / A);
      store<f64>(K + o, (0.5 * t0) / A); store<f64>(K + o, (0.5 * t1) / A, 8); store<f64>(K + o, (0.5 * t2) / A, 16);
    }
    // δq_v = (δζ_v − q̄_v δh_v)/h̄_v and its edge mean
    for (let v = 0; v < nv; v++) {
      const j = 3 * v, VA = ld(vArea, v);
      let z0: f64 = 0, z1: f64 = 0, z2: f64 = 0;
      if (load<u8>(vi + <usize>v) != 0) {
        const a = u + <usize>li(ve, j), b = u + <usize>li(ve, j + 1), c = u + <usize>li(ve, j + 2);
        const wa = ld(vsd, j), wb = ld(vsd, j + 1), wc = ld(vsd, j + 2);
        let s0: f64 = 0, s1: f64 = 0, s2: f64 = 0;
        s0 += wa * load<f64>(a); s0 += wb * load<f64>(b); s0 += wc * load<f64>(c);
        s1 += wa * load<f64>(a, 8); s1 += wb * load<f64>(b, 8); s1 += wc * load<f64>(c, 8);
        s2 += wa * load<f64>(a, 16); s2 += wb * load<f64>(b, 16); s2 += wc * load<f64>(c, 16);
        z0 = s0 / VA; z1 = s1 / VA; z2 = s2 / VA;
      }
      const a = h + <usize>li(vc, j), b = h + <usize>li(vc, j + 1), c = h + <usize>li(vc, j + 2);
      const wa = ld(ka, j), wb = ld(ka, j + 1), wc = ld(ka, j + 2);
      let m0: f64 = 0, m1: f64 = 0, m2: f64 = 0;
      m0 += wa * load<f64>(a); m0 += wb * load<f64>(b); m0 += wc * load<f64>(c);
      m1 += wa * load<f64>(a, 8); m1 += wb * load<f64>(b, 8); m1 += wc * load<f64>(c, 8);
      m2 += wa * load<f64>(a, 16); m2 += wb * load<f64>(b, 16); m2 += wc * load<f64>(c, 16);
      const o = <usize>v * sE;
      store<f64>(qv + o, (z0 - load<f64>(qVb + o) * (m0 / VA)) / load<f64>(hV + o));
      store<f64>(qv + o, (z1 - load<f64>(qVb + o, 8) * (m1 / VA)) / load<f64>(hV + o, 8), 8);
      store<f64>(qv + o, (z2 - load<f64>(qVb + o, 16) * (m2 / VA)) / load<f64>(hV + o, 16), 16);
    }
    for (let e = 0; e < ne; e++) {
      const a = qv + <usize>li(ev, 2 * e), b = qv + <usize>li(ev, 2 * e + 1), o = qe + <usize>e * sE;
      store<f64>(o, 0.5 * (load<f64>(a) + load<f64>(b)));
      store<f64>(o, 0.5 * (load<f64>(a, 8) + load<f64>(b, 8)), 8);
      store<f64>(o, 0.5 * (load<f64>(a, 16) + load<f64>(b, 16)), 16);
    }
    // momentum: δQ − G(δK + δM)
    for (let e = 0; e < ne; e++) {
      if (load<u8>(open + <usize>e) == 0) { st(ou0, e, 0); st(ou1, e, 0); st(ou2, e, 0); continue; }
      const o = <usize>e * sE;
      const q01 = v128.load(qB + o), q2 = load<f64>(qB + o, 16);
      const r01 = v128.load(qe + o), r2 = load<f64>(qe + o, 16);
      let a01 = f64x2.splat(0);
      let a2: f64 = 0;
      for (let t = WT * e; t < WT * e + WT; t++) {
        const j = <usize>li(ti, t), c = ld(tw, t);
        const pf = F + j, pq = qB + j, pF = fB + j, pd = qe + j;
        a01 = f64x2.add(a01, f64x2.mul(f64x2.splat(c), f64x2.add(
          f64x2.mul(v128.load(pf), f64x2.add(q01, v128.load(pq))), f64x2.mul(v128.load(pF), f64x2.add(r01, v128.load(pd))))));
        a2 += c * (load<f64>(pf, 16) * (q2 + load<f64>(pq, 16)) + load<f64>(pF, 16) * (r2 + load<f64>(pd, 16)));
      }
      const a0 = f64x2.extract_lane(a01, 0), a1 = f64x2.extract_lane(a01, 1);
      const c1 = <usize>li(ec, 2 * e), c2 = <usize>li(ec, 2 * e + 1), d = ld(dc, e);
      st(ou0, e, 0.5 * a0 - (load<f64>(K + c2) + load<f64>(M + c2) - load<f64>(K + c1) - load<f64>(M + c1)) / d);
      st(ou1, e, 0.5 * a1 - (load<f64>(K + c2, 8) + load<f64>(M + c2, 8) - load<f64>(K + c1, 8) - load<f64>(M + c1, 8)) / d);
      st(ou2, e, 0.5 * a2 - (load<f64>(K + c2, 16) + load<f64>(M + c2, 16) - load<f64>(K + c1, 16) - load<f64>(M + c1, 16)) / d);
    }
  }
}

// ---------------------------------------------------------------------------------------------------------
// Forcing and dissipation of the tendency (terms.ts: windForcing, linearDrag, vectorLaplacian, addScaled), in the
// order the model applies them: wind on the top layer, drag on the bottom layer, then per layer ν2 ∇²u − ν4 ∇⁴u.

/** Wind τ_e/(ρ0 ĥ_e) on the top layer's open edges (if `wind` ≠ 0), then bottom drag −r u (if r > 0). */
export function windAndDrag(out: usize, x: usize, ne: i32, uOffset: i32, L: i32, ec: usize, open: usize, wind: usize, rho0: f64, drag: f64): void {
  if (wind != 0) {
    const o = out + (<usize>uOffset << 3);
    for (let e = 0; e < ne; e++) {
      if (load<u8>(open + <usize>e) == 0) continue;
      const hE = 0.5 * (ld(x, li(ec, 2 * e)) + ld(x, li(ec, 2 * e + 1)));
      st(o, e, ld(o, e) + ld(wind, e) / (rho0 * hE));
    }
  }
  if (drag > 0) {
    const off = uOffset + (L - 1) * ne;
    const o = out + (<usize>off << 3), u = x + (<usize>off << 3);
    for (let e = 0; e < ne; e++) st(o, e, ld(o, e) - drag * ld(u, e));
  }
}

/**
 * Vector Laplacian (∇²u)_e = (δ_c2 − δ_c1)/d_e − (ζ_v2 − ζ_v1)/l_e with δ = D u, ζ = C u (0 at coastline
 * vertices), 0 on coastline edges, into `out`; `div` (nc) and `vort` (nv) are work arrays. `sl` = s·l_e per padded
 * cell slot (byte-offset indices `ci`), `vsd` = t·d_e per vertex slot.
 */
export function vectorLaplacian(
  out: usize, u: usize, nc: i32, ne: i32, nv: i32, WC: i32, ci: usize, sl: usize, area: usize,
  ve: usize, vsd: usize, vArea: usize, vi: usize, ec: usize, ev: usize, dc: usize, len: usize, open: usize, div: usize, vort: usize,
): void {
  for (let i = 0; i < nc; i++) st(div, i, cellSum(sl, ci, u, WC * i, WC) / ld(area, i));
  for (let v = 0; v < nv; v++) {
    const j = 3 * v;
    st(vort, v, load<u8>(vi + <usize>v) != 0
      ? (ld(vsd, j) * ld(u, li(ve, j)) + ld(vsd, j + 1) * ld(u, li(ve, j + 1)) + ld(vsd, j + 2) * ld(u, li(ve, j + 2))) / ld(vArea, v)
      : 0);
  }
  for (let e = 0; e < ne; e++) {
    st(out, e, load<u8>(open + <usize>e) != 0
      ? (ld(div, li(ec, 2 * e + 1)) - ld(div, li(ec, 2 * e))) / ld(dc, e) - (ld(vort, li(ev, 2 * e + 1)) - ld(vort, li(ev, 2 * e))) / ld(len, e)
      : 0);
  }
}

/** out[e] += coef · a[e] for e < n. */
export function addScaled(out: usize, a: usize, coef: f64, n: i32): void {
  for (let e = 0; e < n; e++) st(out, e, ld(out, e) + coef * ld(a, e));
}

// ---------------------------------------------------------------------------------------------------------
// Sparse block LU substitution (solver/linalg/sparseLu.ts, blockLuSolveInPlace with solve2/solve3) for blocks of
// b = 1, 2 or 3 unknowns per node, with the gather into the factor's order and the scatter back: out[perm[q]] = y[q]
// where y solves (I + L)(D + U) y = c[perm[·]]. Column pointers `cp` and node indices `ix` as in BlockLu; lo, up:
// b×b blocks row-major per slot; di: inverted b×b pivots. The operations and their order are the TypeScript loops'.

export function blockLuSolve(
  out: usize, c: usize, y: usize, perm: usize, nNodes: i32, b: i32, cp: usize, ix: usize, lo: usize, up: usize, di: usize,
): void {
  const n = nNodes * b;
  for (let q = 0; q < n; q++) st(y, q, ld(c, li(perm, q)));
  if (b == 1) {
    for (let j = 0; j < nNodes; j++) {
      const yj = ld(y, j);
      if (yj == 0) continue;
      const end = li(cp, j + 1);
      for (let p = li(cp, j); p < end; p++) {
        const i = li(ix, p);
        st(y, i, ld(y, i) - ld(lo, p) * yj);
      }
    }
    for (let j = nNodes - 1; j >= 0; j--) {
      let s = ld(y, j);
      const end = li(cp, j + 1);
      for (let p = li(cp, j); p < end; p++) s -= ld(up, p) * ld(y, li(ix, p));
      st(y, j, s * ld(di, j));
    }
  } else if (b == 2) {
    for (let j = 0; j < nNodes; j++) {
      const jb = 2 * j, y0 = ld(y, jb), y1 = ld(y, jb + 1);
      if (y0 == 0 && y1 == 0) continue;
      const end = li(cp, j + 1);
      for (let p = li(cp, j); p < end; p++) {
        const ib = 2 * li(ix, p), pb = 4 * p;
        st(y, ib, ld(y, ib) - (ld(lo, pb) * y0 + ld(lo, pb + 1) * y1));
        st(y, ib + 1, ld(y, ib + 1) - (ld(lo, pb + 2) * y0 + ld(lo, pb + 3) * y1));
      }
    }
    for (let j = nNodes - 1; j >= 0; j--) {
      const jb = 2 * j, end = li(cp, j + 1);
      let t0 = ld(y, jb), t1 = ld(y, jb + 1);
      for (let p = li(cp, j); p < end; p++) {
        const ib = 2 * li(ix, p), pb = 4 * p;
        const x0 = ld(y, ib), x1 = ld(y, ib + 1);
        t0 -= ld(up, pb) * x0 + ld(up, pb + 1) * x1;
        t1 -= ld(up, pb + 2) * x0 + ld(up, pb + 3) * x1;
      }
      const db = 4 * j;
      st(y, jb, ld(di, db) * t0 + ld(di, db + 1) * t1);
      st(y, jb + 1, ld(di, db + 2) * t0 + ld(di, db + 3) * t1);
    }
  } else {
    for (let j = 0; j < nNodes; j++) {
      const jb = 3 * j, y0 = ld(y, jb), y1 = ld(y, jb + 1), y2 = ld(y, jb + 2);
      if (y0 == 0 && y1 == 0 && y2 == 0) continue;
      const end = li(cp, j + 1);
      for (let p = li(cp, j); p < end; p++) {
        const ib = 3 * li(ix, p), pb = 9 * p;
        st(y, ib, ld(y, ib) - (ld(lo, pb) * y0 + ld(lo, pb + 1) * y1 + ld(lo, pb + 2) * y2));
        st(y, ib + 1, ld(y, ib + 1) - (ld(lo, pb + 3) * y0 + ld(lo, pb + 4) * y1 + ld(lo, pb + 5) * y2));
        st(y, ib + 2, ld(y, ib + 2) - (ld(lo, pb + 6) * y0 + ld(lo, pb + 7) * y1 + ld(lo, pb + 8) * y2));
      }
    }
    for (let j = nNodes - 1; j >= 0; j--) {
      const jb = 3 * j, end = li(cp, j + 1);
      let t0 = ld(y, jb), t1 = ld(y, jb + 1), t2 = ld(y, jb + 2);
      for (let p = li(cp, j); p < end; p++) {
        const ib = 3 * li(ix, p), pb = 9 * p;
        const x0 = ld(y, ib), x1 = ld(y, ib + 1), x2 = ld(y, ib + 2);
        t0 -= ld(up, pb) * x0 + ld(up, pb + 1) * x1 + ld(up, pb + 2) * x2;
        t1 -= ld(up, pb + 3) * x0 + ld(up, pb + 4) * x1 + ld(up, pb + 5) * x2;
        t2 -= ld(up, pb + 6) * x0 + ld(up, pb + 7) * x1 + ld(up, pb + 8) * x2;
      }
      const db = 9 * j;
      st(y, jb, ld(di, db) * t0 + ld(di, db + 1) * t1 + ld(di, db + 2) * t2);
      st(y, jb + 1, ld(di, db + 3) * t0 + ld(di, db + 4) * t1 + ld(di, db + 5) * t2);
      st(y, jb + 2, ld(di, db + 6) * t0 + ld(di, db + 7) * t1 + ld(di, db + 8) * t2);
    }
  }
  for (let q = 0; q < n; q++) st(out, li(perm, q), ld(y, q));
}

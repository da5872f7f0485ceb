/*
 * Comparison loops for `npm run bench`: the TRiSK tendency of a layered shallow-water model and the restricted
 * (one vertical mode) wave operator, written as plain single-threaded C over the connectivity and coefficient
 * arrays that the benchmark exports from a Stepwell mesh and model (one raw little-endian file per array).
 * Same work as the Stepwell kernels: four fused passes (vertex PV, edge flux and PV, cell continuity and
 * Bernoulli function, edge momentum) for the tendency; Coriolis, gradient and divergence stencils for the
 * restricted operator; gradient, two PV fluxes and divergence for the stencils of a barotropic sub-step; the
 * rest-state linear operator of all layers; the Jacobian-vector product of the inviscid, unforced tendency. The layer count is a compile-time constant (-DLAYERS=3), as it is a constant of the
 * generated TypeScript kernels. No threads, no explicit vector intrinsics: what `cc -O2` makes of plain loops.
 *
 * Usage: kernels DIR REPS INNER [cpu]. Prints one JSON object: per kernel the seconds per call of each of REPS
 * repetitions of INNER calls (after INNER warm-up calls), by the monotonic clock or, with `cpu`, by the process's
 * CPU time; writes the outputs of one call to DIR/out_*.f64 so the
 * benchmark can check that the C loop computes what the TypeScript kernel computes.
 */
#define _POSIX_C_SOURCE 199309L
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <time.h>

#ifndef LAYERS
#define LAYERS 3
#endif
#define L LAYERS

static const char *dir;

static void *load(const char *name, size_t elem, size_t *count) {
  char path[4096];
  snprintf(path, sizeof path, "%s/%s", dir, name);
  FILE *f = fopen(path, "rb");
  if (!f) { fprintf(stderr, "kernels: cannot open %s\n", path); exit(2); }
  fseek(f, 0, SEEK_END);
  long bytes = ftell(f);
  fseek(f, 0, SEEK_SET);
  void *p = malloc(bytes > 0 ? (size_t)bytes : 1);
  if (bytes > 0 && fread(p, 1, (size_t)bytes, f) != (size_t)bytes) { fprintf(stderr, "kernels: short read %s\n", path); exit(2); }
  fclose(f);
  if (count) *count = (size_t)bytes / elem;
  return p;
}

static void save(const char *name, const double *a, size_t n) {
  char path[4096];
  snprintf(path, sizeof path, "%s/%s", dir, name);
  FILE *f = fopen(path, "wb");
  if (!f) { fprintf(stderr, "kernels: cannot write %s\n", path); exit(2); }
  fwrite(a, sizeof(double), n, f);
  fclose(f);
}

static clockid_t clockId = CLOCK_MONOTONIC;
static double now(void) {
  struct timespec t;
  clock_gettime(clockId, &t);
  return (double)t.tv_sec + 1e-9 * (double)t.tv_nsec;
}

/* mesh */
static int nc, ne, nv;
static int32_t *vertexEdges, *vertexCellsClamped, *edgeCellsClamped, *edgeVertices, *cellEdgeOffset, *cellEdgeIndex;
static int32_t *tangentOffset, *tangentIndex;
static uint8_t *vertexInterior, *edgeOpen;
static double *vertexCurlCoef, *vertexKiteFraction, *cellEdgeDivCoef, *cellEdgeKeCoef, *edgeInvDistance, *tangentCoef;
/* model */
static double *coriolis, *bottom, *reducedGravity;
/* work, layer-interleaved [L*entity + k] */
static double *qV, *flux, *qE, *fq, *bern;

static void tendency(double *restrict out, const double *restrict x) {
  const int uo = L * nc;
  for (int v = 0; v < nv; v++) {
    const int j = 3 * v;
    const int ca = vertexCellsClamped[j], cb = vertexCellsClamped[j + 1], cd = vertexCellsClamped[j + 2];
    const double fa = vertexKiteFraction[j], fb = vertexKiteFraction[j + 1], fd = vertexKiteFraction[j + 2];
    const double f = coriolis[v];
    for (int k = 0; k < L; k++) {
      double z = 0;
      if (vertexInterior[v]) {
        const double *u = x + uo + k * ne;
        z = vertexCurlCoef[j] * u[vertexEdges[j]] + vertexCurlCoef[j + 1] * u[vertexEdges[j + 1]] + vertexCurlCoef[j + 2] * u[vertexEdges[j + 2]];
      }
      const double *h = x + k * nc;
      qV[L * v + k] = (z + f) / (fa * h[ca] + fb * h[cb] + fd * h[cd]);
    }
  }
  for (int e = 0; e < ne; e++) {
    const int ca = edgeCellsClamped[2 * e], cb = edgeCellsClamped[2 * e + 1];
    const int va = L * edgeVertices[2 * e], vb = L * edgeVertices[2 * e + 1];
    for (int k = 0; k < L; k++) {
      const double F = 0.5 * (x[k * nc + ca] + x[k * nc + cb]) * x[uo + k * ne + e];
      const double q = 0.5 * (qV[va + k] + qV[vb + k]);
      flux[L * e + k] = F;
      qE[L * e + k] = q;
      fq[L * e + k] = F * q;
    }
  }
  for (int i = 0; i < nc; i++) {
    double level = bottom[i], eta[L];
    for (int k = L - 1; k >= 0; k--) { level += x[k * nc + i]; eta[k] = level; }
    double pot = 0;
    for (int k = 0; k < L; k++) { pot += reducedGravity[k] * eta[k]; bern[L * i + k] = pot; }
  }
  for (int i = 0; i < nc; i++) {
    double d[L] = {0}, K[L] = {0};
    for (int q = cellEdgeOffset[i]; q < cellEdgeOffset[i + 1]; q++) {
      const int e = cellEdgeIndex[q];
      const double c = cellEdgeDivCoef[q], w = cellEdgeKeCoef[q];
      for (int k = 0; k < L; k++) {
        const double a = x[uo + k * ne + e];
        d[k] += c * flux[L * e + k];
        K[k] += w * a * a;
      }
    }
    for (int k = 0; k < L; k++) { out[k * nc + i] = -d[k]; bern[L * i + k] += K[k]; }
  }
  for (int e = 0; e < ne; e++) {
    if (!edgeOpen[e]) { for (int k = 0; k < L; k++) out[uo + k * ne + e] = 0; continue; }
    double a[L] = {0}, g[L] = {0};
    for (int t = tangentOffset[e]; t < tangentOffset[e + 1]; t++) {
      const int j = L * tangentIndex[t];
      const double c = tangentCoef[t];
      for (int k = 0; k < L; k++) { a[k] += c * flux[j + k]; g[k] += c * fq[j + k]; }
    }
    const int b1 = L * edgeCellsClamped[2 * e], b2 = L * edgeCellsClamped[2 * e + 1];
    const double id = edgeInvDistance[e];
    for (int k = 0; k < L; k++) out[uo + k * ne + e] = 0.5 * (qE[L * e + k] * a[k] + g[k]) - (bern[b2 + k] - bern[b1 + k]) * id;
  }
}

/* restricted operator, one mode: Coriolis over the tangent stencil, gradient of the two cells, divergence */
static double *corDiag, *gradDiag, *divDiag;
static void restricted(double *restrict out, const double *restrict y) {
  const int uo = nc;
  for (int e = 0; e < ne; e++) {
    if (!edgeOpen[e]) { out[uo + e] = 0; continue; }
    double acc = 0;
    for (int q = tangentOffset[e]; q < tangentOffset[e + 1]; q++) acc += corDiag[q] * y[uo + tangentIndex[q]];
    acc += gradDiag[2 * e] * y[edgeCellsClamped[2 * e]] + gradDiag[2 * e + 1] * y[edgeCellsClamped[2 * e + 1]];
    out[uo + e] = acc;
  }
  for (int i = 0; i < nc; i++) {
    double acc = 0;
    for (int q = cellEdgeOffset[i]; q < cellEdgeOffset[i + 1]; q++) acc += divDiag[q] * y[uo + cellEdgeIndex[q]];
    out[i] = acc;
  }
}

/* barotropic sub-step stencils, one layer, as solver/mesh/operators.ts and pvFlux in terms.ts write them:
   gradient of a cell field, two PV fluxes, divergence of an edge field */
static int32_t *edgeCells;
static double *edgeCellDistance, *cellEdgeSign, *edgeLength, *cellArea;
/* per-slot products that the Stepwell kernels read precomputed (set up once in main, not timed), so that both sides
   do the same arithmetic per call: s·l_e per cell slot, l_e d_e per cell slot, t·d_e per vertex slot */
static double *slotSignLength, *slotLengthDistance, *vertexSignDistance;
static double *btCell, *btEdge, *btQ, *btGrad, *btCor1, *btCor2, *btDiv;
static void gradient(double *restrict out, const double *restrict phi) {
  for (int e = 0; e < ne; e++) out[e] = edgeOpen[e] ? (phi[edgeCells[2 * e + 1]] - phi[edgeCells[2 * e]]) / edgeCellDistance[e] : 0;
}
static void divergence(double *restrict out, const double *restrict flux) {
  for (int i = 0; i < nc; i++) {
    double acc = 0;
    for (int q = cellEdgeOffset[i]; q < cellEdgeOffset[i + 1]; q++) acc += slotSignLength[q] * flux[cellEdgeIndex[q]];
    out[i] = acc / cellArea[i];
  }
}
static void pvFlux(double *restrict out, const double *restrict flux, const double *restrict qEdge) {
  for (int e = 0; e < ne; e++) {
    if (!edgeOpen[e]) { out[e] = 0; continue; }
    const double qe = qEdge[e];
    double acc = 0;
    for (int q = tangentOffset[e]; q < tangentOffset[e + 1]; q++) {
      const int e2 = tangentIndex[q];
      acc += tangentCoef[q] * flux[e2] * (qe + qEdge[e2]);
    }
    out[e] = 0.5 * acc;
  }
}
static void substep(double *out, const double *x) {
  (void)out; (void)x;
  gradient(btGrad, btCell);
  pvFlux(btCor1, btEdge, btQ);
  pvFlux(btCor2, btEdge, btQ);
  divergence(btDiv, btEdge);
}

/* one sub-step of the split-explicit barotropic sub-cycle as the stepper runs it (solver/time/splitExplicit.ts on the
   model's fast/slow split, solver/model/problem.ts): pressure −g G η, Coriolis of the transport Ĥ ū (frozen Ĥ and
   edge PV q) before and after the predictor, the corrector and the running sums of ū, the surface tendency −D(Ĥ ū)
   and the update and running sum of η. TAU, A, B: a fixed sub-step length and averaging weights. */
#define TAU 1.0
#define AVG_A 0.1
#define AVG_B 0.05
static double *spH, *spQ, *spSlow, *spUb0, *spEta0, *spUb, *spEta, *spUbF, *spUbE, *spEtaE;
static double *spPress, *spCor1, *spCor2, *spBase, *spPred, *spTrans, *spDEta;
static double gravity1;
static void coriolisOf(double *restrict out, const double *restrict u) {
  for (int e = 0; e < ne; e++) spTrans[e] = spH[e] * u[e];
  pvFlux(out, spTrans, spQ);
}
static void splitSubstep(double *out, const double *x) {
  (void)out; (void)x;
  for (int e = 0; e < ne; e++) {
    const double g = edgeOpen[e] ? (spEta[edgeCells[2 * e + 1]] - spEta[edgeCells[2 * e]]) / edgeCellDistance[e] : 0;
    spPress[e] = -gravity1 * g;
  }
  coriolisOf(spCor1, spUb);
  for (int e = 0; e < ne; e++) { const double be = spSlow[e] + spPress[e]; spBase[e] = be; spPred[e] = spUb[e] + TAU * (be + spCor1[e]); }
  coriolisOf(spCor2, spPred);
  for (int e = 0; e < ne; e++) {
    const double u = spUb[e] + TAU * (spBase[e] + 0.5 * (spCor1[e] + spCor2[e]));
    spUb[e] = u; spUbF[e] += AVG_B * u; spUbE[e] += AVG_A * u;
  }
  for (int e = 0; e < ne; e++) spTrans[e] = spH[e] * spUb[e];
  divergence(spDEta, spTrans);
  for (int i = 0; i < nc; i++) spDEta[i] = -spDEta[i];
  for (int i = 0; i < nc; i++) { spEtaE[i] += AVG_A * (spEta[i] + 0.5 * TAU * spDEta[i]); spEta[i] += TAU * spDEta[i]; }
}
static void splitReset(void) {
  memcpy(spUb, spUb0, sizeof(double) * (size_t)ne); memcpy(spEta, spEta0, sizeof(double) * (size_t)nc);
  memset(spUbF, 0, sizeof(double) * (size_t)ne); memset(spUbE, 0, sizeof(double) * (size_t)ne); memset(spEtaE, 0, sizeof(double) * (size_t)nc);
}

/* rest-state linear operator of all layers (solver/model/linear.ts): Montgomery anomaly M' = G h' per cell, then
   per layer the Coriolis term with rest PV minus the gradient of M', and the continuity -D(H_k u_k) */
static double *coupling, *restCoriolis, *edgeThicknessRest, *restCont, *restMont, *restX, *restOut;
static int nnzT, nSlots;
static void restOperator(double *restrict out, const double *restrict x) {
  for (int i = 0; i < nc; i++)
    for (int k = 0; k < L; k++) {
      double s = 0;
      for (int j = 0; j < L; j++) s += coupling[k * L + j] * x[j * nc + i];
      restMont[k * nc + i] = s;
    }
  for (int k = 0; k < L; k++) {
    const double *u = x + L * nc + k * ne, *M = restMont + k * nc, *cc = restCoriolis + k * nnzT, *kc = restCont + k * nSlots;
    double *oU = out + L * nc + k * ne, *oH = out + k * nc;
    for (int e = 0; e < ne; e++) {
      if (!edgeOpen[e]) { oU[e] = 0; continue; }
      double acc = 0;
      for (int q = tangentOffset[e]; q < tangentOffset[e + 1]; q++) acc += cc[q] * u[tangentIndex[q]];
      oU[e] = acc - (M[edgeCells[2 * e + 1]] - M[edgeCells[2 * e]]) * edgeInvDistance[e];
    }
    for (int i = 0; i < nc; i++) {
      double acc = 0;
      for (int q = cellEdgeOffset[i]; q < cellEdgeOffset[i + 1]; q++) acc += kc[q] * u[cellEdgeIndex[q]];
      oH[i] = acc;
    }
  }
}
static void restTimed(double *out, const double *x) { (void)out; (void)x; restOperator(restOut, restX); }

/* Jacobian-vector product of the inviscid, unforced tendency about the state x̄ (solver/model/jacobian.ts):
   setup computes the linearization point (not timed), jacobian() is the product */
static double *vertexKiteArea, *vertexArea, *vertexEdgeSign;
static double *jxBar, *jhEdge, *jflux, *jhVert, *jqVert, *jqEdge, *jdM, *jdhEdge, *jdFlux, *jdVort, *jdqVert, *jdqEdge, *jdK, *jv, *jout;
static void curlOf(double *out, const double *u) {
  for (int v = 0; v < nv; v++) {
    if (!vertexInterior[v]) { out[v] = 0; continue; }
    double s = 0;
    for (int j = 3 * v; j < 3 * v + 3; j++) s += vertexSignDistance[j] * u[vertexEdges[j]];
    out[v] = s / vertexArea[v];
  }
}
static void vertexMean(double *out, const double *h) {
  for (int v = 0; v < nv; v++) {
    double s = 0;
    for (int j = 3 * v; j < 3 * v + 3; j++) s += vertexKiteArea[j] * h[vertexCellsClamped[j]];
    out[v] = s / vertexArea[v];
  }
}
static void jacobianSetup(const double *x) {
  for (int k = 0; k < L; k++) {
    const double *h = x + k * nc, *u = x + L * nc + k * ne;
    for (int e = 0; e < ne; e++) {
      jhEdge[k * ne + e] = 0.5 * (h[edgeCellsClamped[2 * e]] + h[edgeCellsClamped[2 * e + 1]]);
      jflux[k * ne + e] = jhEdge[k * ne + e] * u[e];
    }
    vertexMean(jhVert + k * nv, h);
    curlOf(jdVort, u);
    for (int v = 0; v < nv; v++) jqVert[k * nv + v] = (jdVort[v] + coriolis[v]) / jhVert[k * nv + v];
    for (int e = 0; e < ne; e++) jqEdge[k * ne + e] = 0.5 * (jqVert[k * nv + edgeVertices[2 * e]] + jqVert[k * nv + edgeVertices[2 * e + 1]]);
  }
}
static void jacobian(double *restrict out, const double *restrict x) {
  for (int i = 0; i < nc; i++)
    for (int k = 0; k < L; k++) {
      double s = 0;
      for (int j = 0; j < L; j++) s += coupling[k * L + j] * x[j * nc + i];
      jdM[k * nc + i] = s;
    }
  for (int k = 0; k < L; k++) {
    const int hOff = k * nc, uOff = L * nc + k * ne, eOff = k * ne, vOff = k * nv;
    const double *h = x + hOff, *u = x + uOff, *ub = jxBar + uOff;
    for (int e = 0; e < ne; e++) {
      jdhEdge[e] = 0.5 * (h[edgeCellsClamped[2 * e]] + h[edgeCellsClamped[2 * e + 1]]);
      jdFlux[e] = jdhEdge[e] * ub[e] + jhEdge[eOff + e] * u[e];
    }
    for (int i = 0; i < nc; i++) {
      double s = 0;
      for (int q = cellEdgeOffset[i]; q < cellEdgeOffset[i + 1]; q++) s += slotSignLength[q] * jdFlux[cellEdgeIndex[q]];
      out[hOff + i] = -s / cellArea[i];
    }
    curlOf(jdVort, u);
    vertexMean(jdqVert, h);
    for (int v = 0; v < nv; v++) jdqVert[v] = (jdVort[v] - jqVert[vOff + v] * jdqVert[v]) / jhVert[vOff + v];
    for (int e = 0; e < ne; e++) jdqEdge[e] = 0.5 * (jdqVert[edgeVertices[2 * e]] + jdqVert[edgeVertices[2 * e + 1]]);
    for (int i = 0; i < nc; i++) {
      double s = 0;
      for (int q = cellEdgeOffset[i]; q < cellEdgeOffset[i + 1]; q++) {
        const int e = cellEdgeIndex[q];
        s += slotLengthDistance[q] * ub[e] * u[e];
      }
      jdK[i] = (0.5 * s) / cellArea[i];
    }
    for (int e = 0; e < ne; e++) {
      if (!edgeOpen[e]) { out[uOff + e] = 0; continue; }
      const double qe = jqEdge[eOff + e], dqe = jdqEdge[e];
      double acc = 0;
      for (int q = tangentOffset[e]; q < tangentOffset[e + 1]; q++) {
        const int e2 = tangentIndex[q];
        acc += tangentCoef[q] * (jdFlux[e2] * (qe + jqEdge[eOff + e2]) + jflux[eOff + e2] * (dqe + jdqEdge[e2]));
      }
      const int c1 = edgeCells[2 * e], c2 = edgeCells[2 * e + 1];
      out[uOff + e] = 0.5 * acc - (jdK[c2] + jdM[hOff + c2] - jdK[c1] - jdM[hOff + c1]) / edgeCellDistance[e];
    }
  }
}
static void jacobianTimed(double *out, const double *x) { (void)out; (void)x; jacobian(jout, jv); }

static void timeIt(const char *name, void (*fn)(double *, const double *), double *out, const double *x, int reps, int inner, int last) {
  double *t = malloc(sizeof(double) * (size_t)reps);
  for (int w = 0; w < inner; w++) fn(out, x);
  for (int r = 0; r < reps; r++) {
    const double t0 = now();
    for (int w = 0; w < inner; w++) fn(out, x);
    t[r] = (now() - t0) / inner;
  }
  printf("  \"%s\": [", name);
  for (int r = 0; r < reps; r++) printf("%s%.9e", r ? ", " : "", t[r]);
  printf("]%s\n", last ? "" : ",");
  free(t);
}

int main(int argc, char **argv) {
  if (argc < 4) { fprintf(stderr, "usage: kernels DIR REPS INNER [cpu]\n"); return 2; }
  if (argc > 4 && strcmp(argv[4], "cpu") == 0) clockId = CLOCK_PROCESS_CPUTIME_ID;
  dir = argv[1];
  const int reps = atoi(argv[2]), inner = atoi(argv[3]);
  size_t n;
  vertexEdges = load("vertexEdges.i32", 4, &n); nv = (int)(n / 3);
  vertexCellsClamped = load("vertexCellsClamped.i32", 4, NULL);
  vertexInterior = load("vertexInterior.u8", 1, NULL);
  vertexCurlCoef = load("vertexCurlCoef.f64", 8, NULL);
  vertexKiteFraction = load("vertexKiteFraction.f64", 8, NULL);
  edgeCellsClamped = load("edgeCellsClamped.i32", 4, &n); ne = (int)(n / 2);
  edgeVertices = load("edgeVertices.i32", 4, NULL);
  edgeOpen = load("edgeOpen.u8", 1, NULL);
  edgeInvDistance = load("edgeInvDistance.f64", 8, NULL);
  cellEdgeOffset = load("cellEdgeOffset.i32", 4, &n); nc = (int)n - 1;
  cellEdgeIndex = load("cellEdgeIndex.i32", 4, NULL);
  cellEdgeDivCoef = load("cellEdgeDivCoef.f64", 8, NULL);
  cellEdgeKeCoef = load("cellEdgeKeCoef.f64", 8, NULL);
  tangentOffset = load("tangentOffset.i32", 4, NULL);
  tangentIndex = load("tangentIndex.i32", 4, NULL);
  tangentCoef = load("tangentCoef.f64", 8, NULL);
  coriolis = load("coriolisVertex.f64", 8, NULL);
  bottom = load("bottom.f64", 8, NULL);
  reducedGravity = load("reducedGravity.f64", 8, &n);
  if ((int)n != L) { fprintf(stderr, "kernels: compiled for %d layers, model has %d\n", L, (int)n); return 2; }
  double *x = load("state.f64", 8, &n);
  if ((int)n != L * (nc + ne)) { fprintf(stderr, "kernels: state length %d, expected %d\n", (int)n, L * (nc + ne)); return 2; }
  corDiag = load("restrictedCoriolis.f64", 8, NULL);
  gradDiag = load("restrictedGradient.f64", 8, NULL);
  divDiag = load("restrictedDivergence.f64", 8, NULL);
  double *y = load("modal.f64", 8, &n);
  if ((int)n != nc + ne) { fprintf(stderr, "kernels: modal length %d, expected %d\n", (int)n, nc + ne); return 2; }

  edgeCells = load("edgeCells.i32", 4, NULL);
  edgeCellDistance = load("edgeCellDistance.f64", 8, NULL);
  cellEdgeSign = load("cellEdgeSign.f64", 8, NULL);
  edgeLength = load("edgeLength.f64", 8, NULL);
  cellArea = load("cellArea.f64", 8, NULL);
  btCell = load("barotropicCell.f64", 8, NULL);
  btEdge = load("barotropicEdge.f64", 8, NULL);
  btQ = load("barotropicPv.f64", 8, NULL);
  btGrad = calloc((size_t)ne, sizeof(double));
  btCor1 = calloc((size_t)ne, sizeof(double));
  btCor2 = calloc((size_t)ne, sizeof(double));
  btDiv = calloc((size_t)nc, sizeof(double));

  coupling = load("coupling.f64", 8, NULL);
  restCoriolis = load("restCoriolis.f64", 8, &n); nnzT = (int)(n / L);
  edgeThicknessRest = load("restEdgeThickness.f64", 8, NULL);
  restX = load("restInput.f64", 8, NULL);
  nSlots = cellEdgeOffset[nc];
  restCont = malloc(sizeof(double) * (size_t)(L * nSlots));
  for (int k = 0; k < L; k++)
    for (int i = 0; i < nc; i++)
      for (int q = cellEdgeOffset[i]; q < cellEdgeOffset[i + 1]; q++) {
        const int e = cellEdgeIndex[q];
        restCont[k * nSlots + q] = (-cellEdgeSign[q] * edgeLength[e] * edgeThicknessRest[k * ne + e]) / cellArea[i];
      }
  restMont = calloc((size_t)(L * nc), sizeof(double));
  restOut = calloc((size_t)(L * (nc + ne)), sizeof(double));

  vertexKiteArea = load("vertexKiteArea.f64", 8, NULL);
  vertexArea = load("vertexArea.f64", 8, NULL);
  vertexEdgeSign = load("vertexEdgeSign.f64", 8, NULL);
  slotSignLength = malloc(sizeof(double) * (size_t)nSlots);
  slotLengthDistance = malloc(sizeof(double) * (size_t)nSlots);
  for (int q = 0; q < nSlots; q++) {
    const int e = cellEdgeIndex[q];
    slotSignLength[q] = cellEdgeSign[q] * edgeLength[e];
    slotLengthDistance[q] = edgeLength[e] * edgeCellDistance[e];
  }
  vertexSignDistance = malloc(sizeof(double) * (size_t)(3 * nv));
  for (int j = 0; j < 3 * nv; j++) vertexSignDistance[j] = vertexEdgeSign[j] * edgeCellDistance[vertexEdges[j]];
  jxBar = x;
  jv = restX;
  jhEdge = calloc((size_t)(L * ne), sizeof(double)); jflux = calloc((size_t)(L * ne), sizeof(double));
  jqEdge = calloc((size_t)(L * ne), sizeof(double)); jhVert = calloc((size_t)(L * nv), sizeof(double));
  jqVert = calloc((size_t)(L * nv), sizeof(double)); jdM = calloc((size_t)(L * nc), sizeof(double));
  jdhEdge = calloc((size_t)ne, sizeof(double)); jdFlux = calloc((size_t)ne, sizeof(double)); jdqEdge = calloc((size_t)ne, sizeof(double));
  jdVort = calloc((size_t)nv, sizeof(double)); jdqVert = calloc((size_t)nv, sizeof(double)); jdK = calloc((size_t)nc, sizeof(double));
  jout = calloc((size_t)(L * (nc + ne)), sizeof(double));
  jacobianSetup(x);

  spH = load("splitThickness.f64", 8, NULL); spQ = load("splitPv.f64", 8, NULL); spSlow = load("splitSlow.f64", 8, NULL);
  spUb0 = btEdge; spEta0 = btCell; gravity1 = reducedGravity[0];
  double **spWork[] = { &spUb, &spUbF, &spUbE, &spPress, &spCor1, &spCor2, &spBase, &spPred, &spTrans };
  for (size_t w = 0; w < sizeof spWork / sizeof spWork[0]; w++) *spWork[w] = calloc((size_t)ne, sizeof(double));
  spEta = calloc((size_t)nc, sizeof(double)); spEtaE = calloc((size_t)nc, sizeof(double)); spDEta = calloc((size_t)nc, sizeof(double));
  splitReset();

  qV = calloc((size_t)L * nv, sizeof(double));
  flux = calloc((size_t)L * ne, sizeof(double));
  qE = calloc((size_t)L * ne, sizeof(double));
  fq = calloc((size_t)L * ne, sizeof(double));
  bern = calloc((size_t)L * nc, sizeof(double));
  double *out = calloc((size_t)L * (nc + ne), sizeof(double));
  double *outModal = calloc((size_t)(nc + ne), sizeof(double));

  printf("{\n");
  timeIt("tendency", tendency, out, x, reps, inner, 0);
  timeIt("restricted", restricted, outModal, y, reps, 2 * inner, 0);
  timeIt("substep", substep, NULL, NULL, reps, 2 * inner, 0);
  timeIt("rest", restTimed, NULL, NULL, reps, inner, 0);
  timeIt("jacobian", jacobianTimed, NULL, NULL, reps, inner, 0);
  timeIt("split", splitSubstep, NULL, NULL, reps, 2 * inner, 1);
  printf("}\n");
  save("out_tendency.f64", out, (size_t)L * (nc + ne));
  save("out_restricted.f64", outModal, (size_t)(nc + ne));
  double *bt = malloc(sizeof(double) * (size_t)(3 * ne + nc));
  memcpy(bt, btGrad, sizeof(double) * (size_t)ne);
  memcpy(bt + ne, btCor1, sizeof(double) * (size_t)ne);
  memcpy(bt + 2 * ne, btCor2, sizeof(double) * (size_t)ne);
  memcpy(bt + 3 * ne, btDiv, sizeof(double) * (size_t)nc);
  save("out_substep.f64", bt, (size_t)(3 * ne + nc));
  save("out_rest.f64", restOut, (size_t)(L * (nc + ne)));
  save("out_jacobian.f64", jout, (size_t)(L * (nc + ne)));
  /* one sub-step from the initial state: ū, Σ b ū, Σ a ū, η, Σ a η */
  splitReset();
  splitSubstep(NULL, NULL);
  double *sp = malloc(sizeof(double) * (size_t)(3 * ne + 2 * nc));
  memcpy(sp, spUb, sizeof(double) * (size_t)ne); memcpy(sp + ne, spUbF, sizeof(double) * (size_t)ne); memcpy(sp + 2 * ne, spUbE, sizeof(double) * (size_t)ne);
  memcpy(sp + 3 * ne, spEta, sizeof(double) * (size_t)nc); memcpy(sp + 3 * ne + nc, spEtaE, sizeof(double) * (size_t)nc);
  save("out_split.f64", sp, (size_t)(3 * ne + 2 * nc));
  return 0;
}

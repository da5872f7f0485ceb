import { execFileSync } from "node:child_process";
import { mkdirSync, mkdtempSync, readFileSync, rmSync, writeFileSync } from "node:fs";
import { tmpdir } from "node:os";
import { dirname, join } from "node:path";
import { fileURLToPath } from "node:url";
import type { RestLinearOperator } from "../../solver/model/linear";
import type { ModalRestriction } from "../../solver/model/restriction";
import type { ShallowWaterModel } from "../../solver/model/shallowWater";

/**
 * The comparison figure of the kernel benchmark: our own plain C loops (tests/bench/c/kernels.c), compiled with
 * the system `cc -O2` when there is one, run in a child process over the same connectivity and coefficient arrays,
 * exported from the Stepwell mesh and model being measured.
 */

const SOURCE = join(dirname(fileURLToPath(import.meta.url)), "c", "kernels.c");

export interface NativeLoops {
  /** Compiler line used, for the report. */
  readonly compiler: string;
  /** Export the arrays of a model and its one-mode restriction; returns a handle to time them. */
  load(
    model: ShallowWaterModel, restriction: ModalRestriction, state: Float64Array, modal: Float64Array, barotropic: BarotropicFields,
    rest: RestLinearOperator, restInput: Float64Array,
  ): NativeProblem;
  dispose(): void;
}

/** Inputs of the barotropic sub-step stencils: a cell field, an edge field (transport) and edge PV. */
export interface BarotropicFields {
  cell: Float64Array; edge: Float64Array; pv: Float64Array;
  /** The split sub-step: frozen column thickness Ĥ and edge PV q of the state, and a slow forcing (edges); it starts from ū = edge, η = cell. */
  thickness: Float64Array; frozenPv: Float64Array; slow: Float64Array;
}

export interface NativeProblem {
  /** Seconds per call of each repetition, and the outputs of the last call (sub-step: gradient, two PV fluxes, divergence). */
  run(reps: number, inner: number, cpu: boolean): {
    tendency: number[]; restricted: number[]; substep: number[]; rest: number[]; jacobian: number[]; split: number[];
    outTendency: Float64Array; outRestricted: Float64Array; outSubstep: Float64Array; outRest: Float64Array; outJacobian: Float64Array;
    /** One split sub-step from the start: ū, Σ b ū, Σ a ū (edges), η, Σ a η (cells). */
    outSplit: Float64Array;
  };
}

/** Compile the comparison loops for `layers` layers; null (with the reason) when no C compiler runs. */
export function compileNative(layers: number): NativeLoops | { unavailable: string } {
  const work = mkdtempSync(join(tmpdir(), "stepwell-bench-"));
  const exe = join(work, "kernels");
  const args = ["-O2", `-DLAYERS=${layers}`, "-o", exe, SOURCE];
  try {
    execFileSync("cc", args, { stdio: ["ignore", "ignore", "pipe"] });
  } catch (e) {
    rmSync(work, { recursive: true, force: true });
    const err = e as NodeJS.ErrnoException & { stderr?: Buffer };
    return { unavailable: err.code === "ENOENT" ? "no C compiler (`cc`) on this machine" : `cc failed: ${String(err.stderr ?? err.message).trim().split("\n")[0]}` };
  }
  let count = 0;
  return {
    compiler: `cc ${args.slice(0, 2).join(" ")} (${execFileSync("cc", ["--version"]).toString().split("\n")[0]})`,
    load(model, restriction, state, modal, barotropic, rest, restInput) {
      const dir = join(work, `p${count++}`);
      mkdirSync(dir);
      const m = model.mesh;
      const put = (name: string, a: ArrayBufferView) => writeFileSync(join(dir, name), new Uint8Array(a.buffer, a.byteOffset, a.byteLength));
      put("vertexEdges.i32", m.vertexEdges);
      put("vertexCellsClamped.i32", m.vertexCellsClamped);
      put("vertexInterior.u8", m.vertexInterior);
      put("vertexCurlCoef.f64", m.vertexCurlCoef);
      put("vertexKiteFraction.f64", m.vertexKiteFraction);
      put("edgeCellsClamped.i32", m.edgeCellsClamped);
      put("edgeVertices.i32", m.edgeVertices);
      put("edgeOpen.u8", m.edgeOpen);
      put("edgeInvDistance.f64", m.edgeInvDistance);
      put("cellEdgeOffset.i32", m.cellEdgeOffset);
      put("cellEdgeIndex.i32", m.cellEdgeIndex);
      put("cellEdgeDivCoef.f64", m.cellEdgeDivCoef);
      put("cellEdgeKeCoef.f64", m.cellEdgeKeCoef);
      put("tangentOffset.i32", m.tangentOffset);
      put("tangentIndex.i32", m.tangentIndex);
      put("tangentCoef.f64", m.tangentCoef);
      put("coriolisVertex.f64", model.params.coriolisVertex);
      put("bottom.f64", model.params.bottom);
      put("reducedGravity.f64", model.params.reducedGravity);
      put("state.f64", state);
      const c = restriction.coefficients;
      if (restriction.modes !== 1 || !c.diagonal) throw new Error("the C comparison loop takes a one-mode restriction");
      put("restrictedCoriolis.f64", c.coriolis);
      put("restrictedGradient.f64", c.gradient);
      put("restrictedDivergence.f64", c.divergence);
      put("modal.f64", modal);
      put("edgeCells.i32", m.edgeCells);
      put("edgeCellDistance.f64", m.edgeCellDistance);
      put("cellEdgeSign.f64", m.cellEdgeSign);
      put("edgeLength.f64", m.edgeLength);
      put("cellArea.f64", m.cellArea);
      put("barotropicCell.f64", barotropic.cell);
      put("barotropicEdge.f64", barotropic.edge);
      put("barotropicPv.f64", barotropic.pv);
      put("splitThickness.f64", barotropic.thickness);
      put("splitPv.f64", barotropic.frozenPv);
      put("splitSlow.f64", barotropic.slow);
      put("coupling.f64", rest.coupling);
      put("restCoriolis.f64", rest.coriolisCoef);
      put("restEdgeThickness.f64", rest.edgeThickness);
      put("restInput.f64", restInput);
      put("vertexKiteArea.f64", m.vertexKiteArea);
      put("vertexArea.f64", m.vertexArea);
      put("vertexEdgeSign.f64", m.vertexEdgeSign);
      const read = (name: string) => { const b = readFileSync(join(dir, name)); return new Float64Array(b.buffer, b.byteOffset, b.byteLength / 8).slice(); };
      return {
        run(reps, inner, cpu) {
          const res = JSON.parse(execFileSync(exe, [dir, String(reps), String(inner), ...(cpu ? ["cpu"] : [])]).toString()) as { tendency: number[]; restricted: number[]; substep: number[]; rest: number[]; jacobian: number[]; split: number[] };
          return { ...res, outTendency: read("out_tendency.f64"), outRestricted: read("out_restricted.f64"), outSubstep: read("out_substep.f64"), outRest: read("out_rest.f64"), outJacobian: read("out_jacobian.f64"), outSplit: read("out_split.f64") };
        },
      };
    },
    dispose() { rmSync(work, { recursive: true, force: true }); },
  };
}

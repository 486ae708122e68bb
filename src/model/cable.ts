/**
 * Cable models of single axons.
 *
 * Unmyelinated axon: Hodgkin-Huxley membrane on a uniform cable,
 *   Cm dV/dt = (d / (4 Ri)) d2V/dx2 - I_ion + I_stim,
 * discretised by finite differences with sealed ends. Each step updates the gates
 * exactly for frozen V (exponential Euler, Rush & Larsen 1978) and then V by
 * backward Euler with the ionic conductances linearised at the new gates, which
 * needs one tridiagonal solve (Thomas algorithm) per step: unconditionally stable.
 *
 * Myelinated axon: active nodes of Ranvier joined by perfectly insulating
 * internodes (the model of D. R. McNeal, IEEE Trans. Biomed. Eng. 23 (1976)
 * 329-337), with mammalian nodal kinetics of Chiu, Ritchie, Rogart, Stagg & Sweeney
 * (J. Physiol. 292 (1979) 149-166) in the formulation of Sweeney, Mortimer & Durand
 * (IEEE EMBS 1987) (rate equations from memory; checked here only through the
 * resulting velocity against Hursh's factor).
 *
 * References: Hodgkin & Huxley, J. Physiol. 117 (1952) 500-544; S. Rush, H. Larsen,
 * IEEE Trans. Biomed. Eng. 25 (1978) 389-392; J. B. Hursh, Am. J. Physiol. 127 (1939) 131-139.
 */
import { OptionError } from '../errors';
import { HH, alphaH, alphaM, alphaN, betaH, betaM, betaN, hhPhi, hhRest } from './hh';

/** Solve a tridiagonal system in place (Thomas algorithm). a: sub, b: diag, c: super, d: rhs -> solution in d. */
export function thomas(a: Float64Array, b: Float64Array, c: Float64Array, d: Float64Array, cp: Float64Array): void {
  const n = d.length;
  cp[0] = c[0] / b[0];
  d[0] = d[0] / b[0];
  for (let i = 1; i < n; i++) {
    const m = b[i] - a[i] * cp[i - 1];
    cp[i] = c[i] / m;
    d[i] = (d[i] - a[i] * d[i - 1]) / m;
  }
  for (let i = n - 2; i >= 0; i--) d[i] -= cp[i] * d[i + 1];
}

export interface CableOptions {
  /** axon diameter, um */
  diameterUm: number;
  /** axoplasm resistivity, ohm cm (default 35.4, the 1952 value) */
  resistivity?: number;
  /** temperature, C (default 18.5) */
  temperatureC?: number;
  /** length, mm (default 50) */
  lengthMm?: number;
  /** grid spacing, mm (default 0.1) */
  dxMm?: number;
  /** time step, ms (default 0.005) */
  dtMs?: number;
  /** stimulus: current density uA/cm2 into the first `stimLengthMm` for `stimMs` (default 200 uA/cm2, 0.5 mm, 0.2 ms) */
  stimulus?: { amplitude?: number; lengthMm?: number; durationMs?: number };
  /** simulated time, ms (default: long enough for the spike to cross the cable at 0.5 m/s minimum... capped) */
  tMaxMs?: number;
  /** positions where V(t) is recorded, mm */
  recordAtMm?: number[];
  /** passive membrane: leak conductance only (Rm = 1/gL), starting at EL */
  passive?: boolean;
  /** constant current injected at x = 0 (uA total) for steady-state checks */
  injectUa?: number;
}

export interface CableResult {
  /** arrival time (ms) of the upstroke crossing -20 mV at each grid node (NaN when never) */
  arrival: Float64Array;
  xMm: Float64Array;
  /** conduction velocity between 30% and 70% of the length, m/s (mm/ms) */
  velocity: number;
  /** V(t) at recordAtMm */
  traces: { xMm: number; t: Float64Array; V: Float64Array }[];
  /** final membrane potential along the cable */
  Vfinal: Float64Array;
}

/** Simulate an unmyelinated HH cable and measure its conduction velocity. */
export function simulateCable(o: CableOptions): CableResult {
  const d = o.diameterUm * 1e-4; // cm
  const Ri = o.resistivity ?? 35.4;
  const L = (o.lengthMm ?? 50) / 10; // cm
  const dx = (o.dxMm ?? 0.1) / 10; // cm
  const dt = o.dtMs ?? 0.005;
  if (!(o.diameterUm > 0)) throw new OptionError(`invalid diameterUm: ${o.diameterUm}; must be > 0`);
  if (!(dx > 0 && dx < L / 10))
    throw new OptionError(`invalid dxMm: ${o.dxMm}; must be > 0 and below a tenth of the length`);
  if (!(dt > 0 && dt <= 0.1)) throw new OptionError(`invalid dtMs: ${dt}; must be 0 < dt <= 0.1 ms`);
  const phi = hhPhi(o.temperatureC ?? 18.5);
  const N = Math.round(L / dx) + 1;
  const D = (1000 * d) / (4 * Ri) / (dx * dx); // uA/cm2 per mV between neighbours
  const rest = hhRest();
  const V = new Float64Array(N).fill(o.passive ? HH.EL : rest.V);
  const m = new Float64Array(N).fill(rest.m),
    h = new Float64Array(N).fill(rest.h),
    n = new Float64Array(N).fill(rest.n);
  const arrival = new Float64Array(N).fill(NaN);
  const stimAmp = o.stimulus?.amplitude ?? 2000;
  const stimN = Math.max(1, Math.round((o.stimulus?.lengthMm ?? 1) / 10 / dx));
  const stimT = o.stimulus?.durationMs ?? 0.2;
  const tMax = o.tMaxMs ?? Math.min(200, 2 + (L * 10) / Math.max(0.2, 0.5 * Math.sqrt(o.diameterUm)));
  const steps = Math.round(tMax / dt);
  const a = new Float64Array(N),
    b = new Float64Array(N),
    c = new Float64Array(N),
    rhs = new Float64Array(N),
    cp = new Float64Array(N);
  const rec = (o.recordAtMm ?? []).map((xm) => ({
    xMm: xm,
    i: Math.min(N - 1, Math.round(xm / 10 / dx)),
    t: new Float64Array(steps + 1),
    V: new Float64Array(steps + 1),
  }));
  for (const r of rec) r.V[0] = V[r.i];
  const Cm = HH.Cm;
  // injected current at node 0 (uA) as a density over half a segment's area
  const inj = o.injectUa ? o.injectUa / (Math.PI * d * (dx / 2)) : 0;
  for (let k = 0; k < steps; k++) {
    const t = (k + 1) * dt;
    for (let i = 0; i < N; i++) {
      const v = V[i];
      if (!o.passive) {
        const am = phi * alphaM(v),
          bm = phi * betaM(v),
          ah = phi * alphaH(v),
          bh = phi * betaH(v),
          an = phi * alphaN(v),
          bn = phi * betaN(v);
        let tau = 1 / (am + bm);
        m[i] = am * tau + (m[i] - am * tau) * Math.exp(-dt / tau);
        tau = 1 / (ah + bh);
        h[i] = ah * tau + (h[i] - ah * tau) * Math.exp(-dt / tau);
        tau = 1 / (an + bn);
        n[i] = an * tau + (n[i] - an * tau) * Math.exp(-dt / tau);
      }
      const gNa = o.passive ? 0 : HH.gNa * m[i] ** 3 * h[i],
        gK = o.passive ? 0 : HH.gK * n[i] ** 4,
        gL = HH.gL;
      const gsum = gNa + gK + gL;
      const Isrc = gNa * HH.ENa + gK * HH.EK + gL * HH.EL;
      const stim = (i < stimN && t <= stimT ? stimAmp : 0) + (i === 0 ? inj : 0);
      const left = i > 0 ? D : 0,
        right = i < N - 1 ? D : 0;
      // sealed ends: the end node has one neighbour (mirror), so double its coupling
      const ll = i === N - 1 ? 2 * D : left,
        rr = i === 0 ? 2 * D : right;
      a[i] = -ll;
      c[i] = -rr;
      b[i] = Cm / dt + ll + rr + gsum;
      rhs[i] = (Cm / dt) * v + Isrc + stim;
    }
    thomas(a, b, c, rhs, cp);
    for (let i = 0; i < N; i++) {
      if (Number.isNaN(arrival[i]) && V[i] < -20 && rhs[i] >= -20)
        arrival[i] = t - dt + (dt * (-20 - V[i])) / (rhs[i] - V[i]);
      V[i] = rhs[i];
    }
    for (const r of rec) {
      r.t[k + 1] = t;
      r.V[k + 1] = V[r.i];
    }
  }
  const xMm = Float64Array.from({ length: N }, (_, i) => i * dx * 10);
  const i1 = Math.round(0.3 * (N - 1)),
    i2 = Math.round(0.7 * (N - 1));
  const velocity = (xMm[i2] - xMm[i1]) / (arrival[i2] - arrival[i1]);
  return { arrival, xMm, velocity, traces: rec.map((r) => ({ xMm: r.xMm, t: r.t, V: r.V })), Vfinal: V };
}

// ---- myelinated axon (McNeal-type, CRRSS nodes) ----

/** CRRSS nodal rate functions; V is depolarisation from rest (mV), rates 1/ms at 37 C. */
const crrss = {
  am: (v: number) => (97 + 0.363 * v) / (1 + Math.exp((31 - v) / 5.3)),
  bm: (v: number) => (97 + 0.363 * v) / (1 + Math.exp((31 - v) / 5.3)) / Math.exp((v - 23.8) / 4.17),
  bh: (v: number) => 15.6 / (1 + Math.exp((24 - v) / 10)),
  ah: (v: number) => 15.6 / (1 + Math.exp((24 - v) / 10)) / Math.exp((v - 5.5) / 5),
  gNa: 1445,
  gL: 128,
  ENa: 115,
  EL: -0.01,
  Cm: 2.5,
};

export interface MyelinatedOptions {
  /** fibre outer diameter, um */
  diameterUm: number;
  /** axon / fibre diameter ratio (default 0.7) */
  gRatio?: number;
  /** internode length / fibre diameter (default 100) */
  internodeRatio?: number;
  /** node length, um (default 1) */
  nodeLengthUm?: number;
  /** axoplasm resistivity, ohm cm (default 70) */
  resistivity?: number;
  /** number of nodes (default 41) */
  nodes?: number;
  /** temperature, C (default 37); rates scale with Q10 3 */
  temperatureC?: number;
  dtMs?: number;
}

/** Simulate a myelinated fibre; velocity between nodes at 30% and 70% of its length (m/s). */
export function simulateMyelinated(o: MyelinatedOptions): { velocity: number; arrival: Float64Array } {
  const D = o.diameterUm * 1e-4;
  const dAx = D * (o.gRatio ?? 0.7);
  const Lint = D * (o.internodeRatio ?? 100);
  const ln = (o.nodeLengthUm ?? 1) * 1e-4;
  const Ri = o.resistivity ?? 70;
  const N = o.nodes ?? 41;
  const dt = o.dtMs ?? 0.0005;
  const q = Math.pow(3, ((o.temperatureC ?? 37) - 37) / 10);
  const area = Math.PI * dAx * ln; // cm2
  const Ga = ((Math.PI * dAx * dAx) / (4 * Ri * Lint)) * 1e6; // uS between nodes
  const C = crrss.Cm * area; // uF
  const V = new Float64Array(N),
    m = new Float64Array(N),
    h = new Float64Array(N);
  const m0 = crrss.am(0) / (crrss.am(0) + crrss.bm(0)),
    h0 = crrss.ah(0) / (crrss.ah(0) + crrss.bh(0));
  m.fill(m0);
  h.fill(h0);
  const arrival = new Float64Array(N).fill(NaN);
  const a = new Float64Array(N),
    b = new Float64Array(N),
    c = new Float64Array(N),
    rhs = new Float64Array(N),
    cp = new Float64Array(N);
  const steps = Math.round(5 / dt);
  for (let k = 0; k < steps; k++) {
    const t = (k + 1) * dt;
    for (let i = 0; i < N; i++) {
      const v = V[i];
      const am = q * crrss.am(v),
        bm = q * crrss.bm(v),
        ah = q * crrss.ah(v),
        bh = q * crrss.bh(v);
      let tau = 1 / (am + bm);
      m[i] = am * tau + (m[i] - am * tau) * Math.exp(-dt / tau);
      tau = 1 / (ah + bh);
      h[i] = ah * tau + (h[i] - ah * tau) * Math.exp(-dt / tau);
      const gNa = crrss.gNa * m[i] ** 2 * h[i] * area * 1e3; // uS
      const gL = crrss.gL * area * 1e3;
      const stim = i === 0 && t <= 0.1 ? 20000 * C * 1e3 : 0; // strong brief current at the first node (nA)
      const left = i > 0 ? Ga : 0,
        right = i < N - 1 ? Ga : 0;
      a[i] = -left;
      c[i] = -right;
      b[i] = (C * 1e3) / dt + left + right + gNa + gL; // nA/mV
      rhs[i] = ((C * 1e3) / dt) * v + gNa * crrss.ENa + gL * crrss.EL + stim;
    }
    thomas(a, b, c, rhs, cp);
    for (let i = 0; i < N; i++) {
      if (Number.isNaN(arrival[i]) && V[i] < 50 && rhs[i] >= 50)
        arrival[i] = t - dt + (dt * (50 - V[i])) / (rhs[i] - V[i]);
      V[i] = rhs[i];
    }
  }
  const i1 = Math.round(0.3 * (N - 1)),
    i2 = Math.round(0.7 * (N - 1));
  const dist = (i2 - i1) * (Lint + ln) * 10; // mm
  return { velocity: dist / (arrival[i2] - arrival[i1]), arrival };
}

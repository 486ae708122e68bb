/**
 * Print the demo bundle's per-class results next to the ground truth the demo was made
 * from (data-demo/truth.json). Run: node dist/model/compareDemo.js out/demo-bundle data-demo
 */
import { readFileSync } from 'node:fs';
import { join } from 'node:path';

type Row = Record<string, unknown>;
const read = (p: string) => JSON.parse(readFileSync(p, 'utf8'));
const f = (v: unknown, d = 3) => (typeof v === 'number' ? Number(v.toPrecision(d)).toString() : String(v));

export function compareDemo(bundle: string, demo: string): string {
  const truth = read(join(demo, 'truth.json'));
  const vel: Row[] = read(join(bundle, 'tables', 'velocity.json'));
  const dr: Row[] = read(join(bundle, 'tables', 'dose_response_summary.json'));
  const tq: Row[] = read(join(bundle, 'tables', 'temperature.json'));
  const lines = [
    'Per-class results next to the ground truth of the invented demo study',
    '',
    'conduction velocity at 37 C (m/s): regression of centroid latency on distance vs truth',
  ];
  for (const prep of Object.keys(truth.preparations)) {
    const parts = truth.preparations[prep].classes['37'].map((c: { name: string; vCentroid: number }) => {
      const r = vel.find(
        (v) => v.method === 'regression' && v.basis === 'centroid' && v.class === c.name && v.preparation === prep,
      );
      return `${c.name} ${r ? f(r.velocity_m_s) : 'n/a'} vs ${f(c.vCentroid)}`;
    });
    lines.push(`  ${prep}: ${parts.join('; ')}`);
  }
  lines.push('', 'IC50 (uM): mean over preparations [95% CI] vs geometric mean of the true per-preparation IC50s');
  for (const r of dr) {
    const ic = Object.values(truth.preparations).map(
      (p) =>
        (p as { classes: Record<string, { name: string; ic50: number }[]> }).classes['37'].find(
          (c) => c.name === r.class,
        )!.ic50,
    );
    const geo = Math.exp(ic.reduce((a, b) => a + Math.log(b), 0) / ic.length);
    // the bundle's columns carry their unit (ic50_uM for a concentration in µM)
    const u = String(r.concentration_unit ?? 'uM').replace(/^[µμ]/, 'u');
    const col = (k: string) => f(r[`${k}_${u}`]);
    lines.push(
      `  ${r.class}: ${col('ic50')} [${col('ic50_ci95_low')}, ${col('ic50_ci95_high')}] vs ${f(geo)}; ` +
        `Hill slope ${f(r.hill)} vs ${f(truth.model.hill[r.class as string])}`,
    );
  }
  lines.push('', `Q10 of conduction velocity vs truth ${truth.model.q10Velocity}`);
  for (const r of tq) lines.push(`  ${r.class}: ${f(r.q10)} [${f(r.q10_ci95_low)}, ${f(r.q10_ci95_high)}]`);
  return lines.join('\n');
}

if (require.main === module)
  console.log(compareDemo(process.argv[2] ?? 'out/demo-bundle', process.argv[3] ?? 'data-demo'));

/** The figures of a study bundle, as stand-alone HTML files that share the bundle's copy of plotly.js. */
import type { Study } from '../report/study';
import { recruitmentFigure, velocityFigure, doseResponseFigure, temperatureFigure, summaryFigure } from './builders';
import { plotlyJs, Figure } from './figure';
import { plainTitle } from './export';
import { escapeHtml } from '../notebook/html';
import { recoveryFigure, trainFigure } from './recovery';
import { groupFigures } from './groups';
import { PairedPulseResult } from '../analysis/pairedPulse';
import { TrainResult } from '../analysis/trains';

export function studyFigureList(study: Study): Figure[] {
  const t = study.tables;
  const figs: Figure[] = [];
  if (t.recruitment_points.length) figs.push(recruitmentFigure(t.recruitment_points, null, t.recruitment, study.units));
  const dist = t.components.filter((r) => r.series === 'distance');
  if (dist.length) figs.push(velocityFigure(dist, 'centroid'));
  if (t.dose_response_points.length)
    figs.push(doseResponseFigure(t.dose_response_points, t.dose_response_summary, study.doseResponse?.fits));
  if (t.temperature_points.length)
    figs.push(
      temperatureFigure(t.temperature_points, t.temperature, 'q10'),
      temperatureFigure(t.temperature_points, t.temperature, 'arrhenius'),
    );
  // the recommended estimate per class (the one the Q10 uses), only rows with a velocity
  const v = t.velocity.filter((r) => r.recommended === true && typeof r.velocity_m_s === 'number');
  if (v.length) figs.push(summaryFigure(v, 'velocity_m_s'));
  // optional analyses: figures from their tables (the figure functions read points and summary only)
  const named = (f: Figure, name: string) => new Figure(name, f.spec);
  if (t.paired_pulse?.length && t.paired_pulse_summary) {
    figs.push(
      named(
        recoveryFigure(new PairedPulseResult(t.paired_pulse, t.paired_pulse_summary, new Map(), [])),
        'paired-pulse',
      ),
    );
  }
  if (t.train?.length && t.train_summary)
    figs.push(named(trainFigure(new TrainResult(t.train, t.train_summary, [])), 'train'));
  if (study.groups && study.groups.points.length) figs.push(...groupFigures(study.groups));
  return figs;
}

/** figures/<name>.html for each figure, plus plotly.min.js once. */
export function studyFigures(study: Study): Record<string, string> {
  const out: Record<string, string> = { 'plotly.min.js': plotlyJs() };
  for (const f of studyFigureList(study)) {
    out[`figures/${f.name}.html`] =
      `<!doctype html><html><head><meta charset="utf-8"><title>${escapeHtml(plainTitle(f))}</title></head><body>${f.toHTML('script-tag', '../plotly.min.js')}</body></html>\n`;
    out[`figures/${f.name}.json`] = f.specJson() + '\n';
  }
  return out;
}

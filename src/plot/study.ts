/** The figures of a study bundle, as stand-alone HTML files that share the bundle's copy of plotly.js. */
import type { Study } from '../report/study';
import { recruitmentFigure, velocityFigure, doseResponseFigure, temperatureFigure, summaryFigure } from './builders';
import { plotlyJs, type Figure } from './figure';
import { plainTitle } from './export';
import { escapeHtml } from '../notebook/html';

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
  const v = t.velocity.filter((r) => r.method === 'regression' && r.basis === 'centroid');
  if (v.length) figs.push(summaryFigure(v, 'velocity_m_s'));
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

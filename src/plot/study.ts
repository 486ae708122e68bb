/**
 * The figure files of a study bundle: stand-alone HTML pages that share the bundle's copy of plotly.js. Which
 * figures a study has is the registry's business (src/registry: studyFigureList); this module only writes them.
 */
import { plotlyJs, type Figure } from './figure';
import { plainTitle } from './export';
import { escapeHtml } from '../notebook/html';

/** figures/<name>.html and figures/<name>.json for each figure, plus plotly.min.js once. */
export function studyFigureFiles(figures: readonly Figure[]): Record<string, string> {
  const out: Record<string, string> = { 'plotly.min.js': plotlyJs() };
  for (const f of figures) {
    const title = escapeHtml(plainTitle(f));
    out[`figures/${f.name}.html`] =
      `<!doctype html><html><head><meta charset="utf-8"><title>${title}</title></head>` +
      `<body>${f.toHTML('script-tag', '../plotly.min.js')}</body></html>\n`;
    out[`figures/${f.name}.json`] = f.specJson() + '\n';
  }
  return out;
}

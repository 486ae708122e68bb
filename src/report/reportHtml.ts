/**
 * The study report: one HTML page, readable offline in a browser without a server, with
 * the study summary, per-preparation results, every figure, the tables (sortable), the
 * flags and notes, the methods text and the provenance. One copy of plotly.js serves
 * every figure: the bundle's plotly.min.js beside the page (`bundle: true`), or one copy
 * inlined in the page (a stand-alone report, or a notebook display).
 * Every user string (preparation, class and file names, notes, methods) is HTML-escaped.
 */
import { existsSync, mkdirSync, readFileSync, writeFileSync } from 'node:fs';
import { join, resolve } from 'node:path';
import type { Study } from './study';
import type { Provenance } from './bundle';
import { OutputError, OptionError, systemReason } from '../errors';
import { VERSION } from '../version';
import type { Figure } from '../plot/figure';
import { plotlyJs } from '../plot/figure';
import { plainTitle } from '../plot/export';
import { unitText, plainText } from '../plot/labels';
import { studyFigureList, tableSpec } from '../registry/index';
import { bundleColumns, studyColumnUnits } from '../registry/columns';
import { escapeHtml, formatCell, tableHtml, displayHtml } from '../notebook/html';
import { checkKeys } from '../validate';
import { intervalText, referenceLookup, siteText, velocityLines } from './summary';

type Row = Record<string, unknown>;

/** What the report shows: what the command line's engine has when it writes a bundle. */
export interface ReportInput {
  /** the combined study (combineStudy) */
  study: Study;
  /** the methods text (methodsText of the study's history) */
  methods: string;
  /** the provenance written to provenance.json */
  provenance: Provenance;
  /** figures to show (default: studyFigureList(study), the bundle's figures); [] for none */
  figures?: readonly Figure[];
  /** page title (default: the study name from the manifest step, else "Study report") */
  title?: string;
  /**
   * true: the page sits at the top of a bundle folder; plotly.js comes from ./plotly.min.js
   * and the page links the bundle's files (tables/*.csv, figures/*.html, methods.txt,
   * provenance.json). false (default): plotly.js inlined once, no links to files.
   */
  bundle?: boolean;
}

const INPUT_KEYS = ['study', 'methods', 'provenance', 'figures', 'title', 'bundle'];

/** Tables up to this size are printed; larger ones are on screen only (their files hold them). */
const PRINT_ROWS = 80;
const PRINT_COLUMNS = 14;

/** A table's readable title and whether it is bulky (on screen in a closed section, left out of print). */
const titleOf = (name: string) => tableSpec(name)?.spec.title ?? name;
const isBulk = (name: string) => tableSpec(name)?.spec.bulk === true;

const CSS = `body{margin:0}.fascicle-report{font:14px/1.45 Helvetica,Arial,sans-serif;color:#222;max-width:1100px;
margin:0 auto;padding:0 16px 40px}.fascicle-report h1{font-size:22px;margin:18px 0 4px}
.fascicle-report h2{font-size:18px;margin:28px 0 8px;border-bottom:1px solid #ccc}
.fascicle-report h3{font-size:15px;margin:18px 0 6px}
.fascicle-report nav ol{margin:4px 0}.fascicle-report .meta{color:#555}
.fascicle-report .figure{margin:10px 0 22px;page-break-inside:avoid;break-inside:avoid}
.fascicle-report figcaption{font-size:12px;color:#444}
.fascicle-report .fascicle-table td,.fascicle-report .fascicle-table th{
border-bottom:1px solid #e4e4e4;padding:1px 6px;text-align:left;white-space:nowrap}
.fascicle-report .fascicle-table thead th{position:sticky;top:0;background:#f4f4f4}
.fascicle-report pre.methods{white-space:pre-wrap;font:13px/1.5 Georgia,serif}
.fascicle-report pre.provenance{white-space:pre-wrap;
font-size:11px;background:#f7f7f7;padding:6px;max-height:420px;overflow:auto}.fascicle-report .sev-rejected{color:#a00}
.fascicle-report .sev-warning{color:#8a5a00}.fascicle-report .print-note{display:none}
@media print{.fascicle-report{max-width:none;font-size:10pt}.fascicle-report nav,.fascicle-report .screen-only,
.fascicle-report .bulk,.fascicle-report .wide{display:none}
.fascicle-report .fascicle-table td{white-space:normal}.fascicle-report .print-note{display:block}
.fascicle-report .fascicle-table{max-height:none!important;overflow:visible!important}
.fascicle-report .fascicle-table table{font-size:7pt!important}
.fascicle-report .fascicle-table thead th{position:static}
.fascicle-report pre.provenance{max-height:none;overflow:visible}.fascicle-report h2{break-after:avoid}}`;

/** A study name from the manifest step of the history (its "study" option). */
function studyName(study: Study): string | null {
  const m = study.history.find((h) => h.verb === 'readManifest');
  const s = (m?.options as Row | undefined)?.study;
  return typeof s === 'string' && s.trim() ? s : null;
}

const count = (rows: readonly Row[], k: string) => {
  const out = new Map<string, number>();
  for (const r of rows) out.set(String(r[k] ?? ''), (out.get(String(r[k] ?? '')) ?? 0) + 1);
  return out;
};
/** A unit as printed ('uV' -> 'µV', 'uM' -> 'µM'), HTML-escaped. */
const unit = (u: unknown) => escapeHtml(plainText(unitText(u)));
const plural = (n: number, w: string) => `${n} ${w}${n === 1 ? '' : 's'}`;
const anchor = (s: string) => s.replace(/[^A-Za-z0-9_-]+/g, '-');
const ol = (items: string[], cls = '') =>
  `<ol${cls ? ` class="${cls}"` : ''}>${items.map((x) => `<li>${x}</li>`).join('')}</ol>`;
const pick = (rows: readonly Row[], cols: string[]) =>
  rows.map((r) => Object.fromEntries(cols.filter((c) => c in r).map((c) => [c, r[c]])));

/** The summary list: preparations, sweeps measured, classes, what was computed, flags by severity. */
function summaryHtml(study: Study, figures: readonly Figure[]): string {
  const t = study.tables;
  const preps = [...new Set(t.components.map((r) => String(r.preparation ?? '')))];
  const classes = [...new Set(t.components.map((r) => String(r.class ?? '')))].filter((c) => c);
  const sweeps = new Set(t.components.map((r) => `${r.preparation}\u0000${r.sweep}`)).size;
  const sev = count(t.flags, 'severity');
  const flagText = t.flags.length
    ? [...sev].map(([k, n]) => `<span class="sev-${escapeHtml(anchor(k))}">${escapeHtml(k)}: ${n}</span>`).join(', ')
    : 'none';
  // data files: the inputs that are not the manifest and not part of another file (a binary beside its sidecar)
  const manifests = study.history.some((h) => h.verb === 'readManifest') && study.sources.length ? 1 : 0;
  const dataFiles = study.sources.filter((x) => !x.partOf).length - manifests;
  const inputs =
    dataFiles === study.sources.length
      ? plural(dataFiles, 'input file')
      : `${plural(dataFiles, 'data file')} (${plural(study.sources.length, 'input file')} with the manifest and ` +
        'the binary parts)';
  const items = [
    `${plural(preps.length, 'preparation')}: ${preps.map(escapeHtml).join(', ')}`,
    `${plural(sweeps, 'sweep')} measured (after averaging repeats), ${inputs}`,
    `fibre classes: ${classes.map(escapeHtml).join(', ') || 'none'}`,
    `signal unit: ${unit(study.units)}`,
    `${plural(study.computed, 'estimate')} computed; ${plural(figures.length, 'figure')}`,
    `flags: ${flagText}`,
  ];
  const head: string[] = [];
  // per class in the classes' order (fastest first), with the estimator and the conditions of the estimates
  for (const line of velocityLines(study, formatCell)) head.push(escapeHtml(line));
  const site = referenceLookup(t.components, study.recording?.referenceDistanceMm);
  const interval = (lo: unknown, hi: unknown) => escapeHtml(intervalText(lo, hi, formatCell));
  for (const r of t.dose_response_summary)
    if (typeof r.ic50 === 'number') {
      const hill = typeof r.hill === 'number' ? `, Hill slope ${formatCell(r.hill)}` : '';
      head.push(
        `IC<sub>50</sub> ${escapeHtml(r.class)}${escapeHtml(siteText(r, site))}: ${formatCell(r.ic50)} ` +
          `${unit(r.concentrationUnit ?? '')} (${interval(r.ic50_ci95_low, r.ic50_ci95_high)})${hill}`,
      );
    }
  for (const r of t.temperature)
    if (typeof r.q10 === 'number') {
      head.push(
        `Q<sub>10</sub> ${escapeHtml(r.class)}${escapeHtml(siteText(r, site))} (${escapeHtml(r.measure ?? '')}): ` +
          `${formatCell(r.q10)} (${interval(r.q10_ci95_low, r.q10_ci95_high)})`,
      );
    }
  const li = (xs: string[]) => `<ul>${xs.map((x) => `<li>${x}</li>`).join('')}</ul>`;
  return li(items) + (head.length ? `<h3>Main results</h3>${li(head)}` : '');
}

/** Per-preparation results: recommended velocities, recruitment, dose-response fits, flag count. */
function perPreparationHtml(study: Study): string {
  const t = study.tables;
  const preps = [...new Set(t.components.map((r) => String(r.preparation ?? '')))].sort();
  const classes = [...new Set(t.components.map((r) => String(r.class ?? '')))];
  const of = (rows: readonly Row[], p: string) => rows.filter((r) => String(r.preparation ?? '') === p);
  const parts: string[] = [];
  const named = (table: string, rows: Row[]) => bundleColumns(table, rows as never, studyColumnUnits(study));
  for (const p of preps) {
    // the classes in their order (fastest first), as in the component table
    const v = of(t.velocity, p)
      .filter((r) => r.recommended === true)
      .sort((a, b) => classes.indexOf(String(a.class)) - classes.indexOf(String(b.class)));
    const rc = of(t.recruitment, p);
    const dr = of(t.dose_response_per_preparation, p);
    const fl = of(t.flags, p);
    const sec = [`<h3 id="prep-${escapeHtml(anchor(p))}">Preparation ${escapeHtml(p)}</h3>`];
    if (v.length) {
      const cols = [
        'class',
        'method',
        'basis',
        'temperatureC',
        'concentration',
        'velocity_m_s',
        'ci95_low_m_s',
        'ci95_high_m_s',
        'n',
        'status',
        'reason',
      ];
      const caption = 'Conduction velocity (recommended estimator)';
      sec.push(tableHtml(named('velocity', pick(v, cols)), { caption, sortable: true }));
    }
    if (rc.length) {
      const cols = [
        'class',
        'distanceMm',
        'temperatureC',
        'intensityUnit',
        'threshold',
        'i50',
        'i50_ci95_low',
        'i50_ci95_high',
        'maximum',
        'status',
      ];
      sec.push(tableHtml(named('recruitment', pick(rc, cols)), { caption: 'Recruitment', sortable: true }));
    }
    if (dr.length)
      sec.push(
        tableHtml(named('dose_response_per_preparation', dr), { caption: 'Dose-response fits', sortable: true }),
      );
    sec.push(
      `<p>${fl.length ? `<a href="#table-flags">${plural(fl.length, 'flag')}</a>` : 'no flags'} ` +
        `for this preparation.</p>`,
    );
    parts.push(sec.join('\n'));
  }
  return parts.join('\n') || '<p>No preparations.</p>';
}

/** Why a table is empty: the study's notes about its analysis, or a plain statement. */
function emptyReason(study: Study, name: string): string {
  const a = tableSpec(name)?.analysis?.id;
  const notes = a ? study.notes.filter((n) => n.startsWith(`${a}:`) || n.includes(` ${a}:`)) : [];
  if (notes.length) return notes.map(escapeHtml).join('; ');
  const why = tableSpec(name)?.spec.empty;
  return why ? escapeHtml(why) : 'the analysis had no data in this study';
}

function tablesHtml(study: Study, bundle: boolean): { html: string; toc: string[] } {
  const toc: string[] = [];
  const parts: string[] = [];
  for (const [name, rows] of Object.entries(study.tables) as [string, Row[]][]) {
    if (name === 'flags') continue;
    const id = `table-${anchor(name)}`;
    const title = titleOf(name);
    const n = escapeHtml(name);
    const file = bundle ? ` (<a href="tables/${n}.csv">CSV</a>, <a href="tables/${n}.json">JSON</a>)` : '';
    toc.push(`<a href="#${id}">${escapeHtml(title)}</a>`);
    if (!rows.length) {
      // an analysis without data writes no table file: say so, and why
      const why = emptyReason(study, name);
      const absent = bundle ? ' (no file in tables/)' : '';
      parts.push(`<section id="${id}"><h3>${escapeHtml(title)}</h3><p>No rows${absent}: ${why}.</p></section>`);
      continue;
    }
    // the columns as the bundle's files name them
    const table = tableHtml(bundleColumns(name, rows as never, studyColumnUnits(study)), {
      sortable: true,
      maxRows: 2000,
    });
    const cols = new Set(rows.flatMap((r) => Object.keys(r))).size;
    const printNote =
      `<p class="print-note">${plural(rows.length, 'row')} of ${cols} columns; not printed` +
      `${bundle ? `: see tables/${escapeHtml(name)}.csv` : ''}.</p>`;
    // long or wide tables do not fit a printed page: on screen only (long ones in a closed section)
    const body = isBulk(name)
      ? `<details class="bulk"><summary>${plural(rows.length, 'row')}: show</summary>${table}</details>${printNote}`
      : rows.length > PRINT_ROWS || cols > PRINT_COLUMNS
        ? `<div class="wide">${table}</div>${printNote}`
        : table;
    parts.push(
      `<section id="${id}"><h3>${escapeHtml(title)}</h3><p class="meta">${plural(rows.length, 'row')}${file}.` +
        '<span class="screen-only"> Click a column header to sort.</span></p>' +
        body +
        '</section>',
    );
  }
  return { html: parts.join('\n'), toc };
}

function flagsHtml(study: Study): string {
  const f = study.tables.flags;
  if (!f.length) return '<p>No flags: every estimate was made and passed its checks.</p>';
  const by = count(f, 'severity');
  const counts = [...by].map(([k, n]) => `${escapeHtml(k)}: ${n}`).join(', ');
  return (
    `<p>${counts}. Rejected: the estimate could not be made; ` +
    'not measured: there was nothing to measure; warning: the estimate was made but may be wrong.</p>' +
    tableHtml(f, { sortable: true, maxRows: 2000 })
  );
}

function figuresHtml(figures: readonly Figure[], bundle: boolean): { html: string; toc: string[] } {
  const toc: string[] = [];
  const html = figures
    .map((f, i) => {
      const id = `figure-${i + 1}-${anchor(f.name)}`;
      const title = plainTitle(f);
      toc.push(`<a href="#${id}">Figure ${i + 1}: ${escapeHtml(title)}</a>`);
      const link = bundle ? ` (<a href="figures/${escapeHtml(f.name)}.html">own page</a>)` : '';
      const caption = `<figcaption>Figure ${i + 1}. ${escapeHtml(title)}${link}</figcaption>`;
      return `<figure class="figure" id="${id}">${f.toHTML('page')}${caption}</figure>`;
    })
    .join('\n');
  return { html, toc };
}

/** The report as one HTML page (see ReportInput for where plotly.js comes from). */
export function reportHtml(input: ReportInput): string {
  if (!input || typeof input !== 'object') throw new OptionError('reportHtml: expected { study, methods, provenance }');
  checkKeys('reportHtml input', input, INPUT_KEYS);
  const { study, methods, provenance } = input;
  if (!study || !study.tables) {
    throw new OptionError('reportHtml: "study" must be a study (from combineStudy or runStudy)');
  }
  if (typeof methods !== 'string') throw new OptionError('reportHtml: "methods" must be the methods text (a string)');
  if (!provenance || typeof provenance !== 'object') {
    throw new OptionError('reportHtml: "provenance" must be a provenance object (as in provenance.json)');
  }
  const bundle = input.bundle === true;
  const figures = input.figures ?? studyFigureList(study);
  const title = input.title ?? studyName(study) ?? 'Study report';
  const figs = figuresHtml(figures, bundle);
  const tabs = tablesHtml(study, bundle);
  const notes = study.notes.length
    ? `<ul>${study.notes.map((n) => `<li>${escapeHtml(n)}</li>`).join('')}</ul>`
    : '<p>No notes.</p>';
  const files = bundle
    ? '<p class="meta">Files of this bundle: <a href="methods.txt">methods.txt</a>, ' +
      '<a href="provenance.json">provenance.json</a>, <a href="notes.txt">notes.txt</a>, ' +
      `tables under tables/${figures.length ? ', figures under figures/' : ''}.</p>`
    : '';
  const toc = [
    '<a href="#summary">Summary</a>',
    '<a href="#preparations">Results per preparation</a>',
    `<a href="#figures">Figures</a>${figs.toc.length ? ol(figs.toc) : ''}`,
    `<a href="#tables">Tables</a>`,
    '<a href="#flags">Flags, warnings and notes</a>',
    '<a href="#methods">Methods</a>',
    '<a href="#provenance">Provenance</a>',
  ];
  let plotly = '';
  if (figures.length) {
    // an AMD loader on the page (a notebook's require.js) would take plotly.js as a module: hide it while it runs
    const inline = `<script>${plotlyJs().replace(/<\/(script)/gi, '<\\/$1')}</script>`;
    plotly = bundle
      ? '<script src="plotly.min.js"></script>'
      : `<script>window.__fascicleDefine=window.define;window.define=undefined;</script>${inline}` +
        '<script>window.define=window.__fascicleDefine;</script>';
  }
  const inputs = (provenance.inputs ?? []).map((s) => ({
    path: s.path,
    bytes: s.bytes,
    sha256: s.sha256,
    partOf: s.partOf ?? '',
  }));
  const steps = (provenance.steps ?? []).map((s, i) => ({
    step: i + 1,
    verb: s.verb,
    version: s.version,
    options: JSON.stringify(s.options),
  }));
  const esc = escapeHtml;
  const rr = provenance.rerun;
  const rerun = rr
    ? `<p>Rerun with manifest <code>${esc(rr.manifest)}</code>${rr.shard ? ` (shard ${esc(rr.shard)})` : ''}.</p>`
    : '';
  const prov = `<pre class="provenance">${esc(JSON.stringify(provenance, null, 1))}</pre>`;
  const writtenBy = `fascicle ${esc(provenance.version ?? VERSION)} (Node ${esc(provenance.node ?? '')})`;
  return `<!doctype html>
<html lang="en"><head><meta charset="utf-8"><meta name="generator" content="fascicle ${escapeHtml(VERSION)}">
<meta name="viewport" content="width=device-width, initial-scale=1"><title>${escapeHtml(title)}</title>
<style>${CSS}</style>${plotly}</head><body><main class="fascicle-report">
<h1>${escapeHtml(title)}</h1>
<p class="meta">Study report written by ${writtenBy}.</p>
${files}
<nav><h2>Contents</h2>${ol(toc)}</nav>
<section id="summary"><h2>Summary</h2>${summaryHtml(study, figures)}</section>
<section id="preparations"><h2>Results per preparation</h2>${perPreparationHtml(study)}</section>
<section id="figures"><h2>Figures</h2>${figs.html || '<p>No figures.</p>'}</section>
<section id="tables"><h2>Tables</h2>${ol(tabs.toc, 'screen-only')}${tabs.html}</section>
<section id="flags"><h2>Flags, warnings and notes</h2>
<h3 id="table-flags">Flags</h3>${flagsHtml(study)}<h3>Notes</h3>${notes}</section>
<section id="methods"><h2>Methods</h2><pre class="methods">${escapeHtml(methods.trim())}</pre></section>
<section id="provenance"><h2>Provenance</h2>
<p>${writtenBy}${provenance.paths ? `; ${esc(provenance.paths)}` : ''}.</p>
${rerun}
<h3>Inputs (SHA-256)</h3>${tableHtml(inputs, { sortable: true, maxRows: 5000 })}
<h3>Processing steps</h3>${tableHtml(steps, { maxRows: 5000 })}
<details class="screen-only"><summary>provenance.json</summary>${prov}</details>
</section>
</main></body></html>
`;
}

/**
 * Write `report.html` into the folder `dir` (made if missing), plotly.js inlined once (a
 * stand-alone page). A report.html that fascicle did not write is never replaced.
 * Returns the path written.
 * @throws OutputError when the file is refused or cannot be written.
 */
export function writeReportHtml(dir: string, input: Omit<ReportInput, 'bundle'>): string {
  const path = join(resolve(dir), 'report.html');
  if (existsSync(path)) {
    let ours = false;
    try {
      ours = /<meta name="generator" content="fascicle /.test(readFileSync(path, 'utf8').slice(0, 400));
    } catch {
      /* unreadable: not ours */
    }
    if (!ours) {
      throw new OutputError(
        path,
        `refusing to write ${path}: a report.html that fascicle did not write is there; ` +
          'give another folder, or move that file away yourself',
        { refused: true },
      );
    }
  }
  const html = reportHtml({ ...input, bundle: false });
  try {
    mkdirSync(resolve(dir), { recursive: true });
    writeFileSync(path, html);
  } catch (e) {
    const code = (e as NodeJS.ErrnoException).code;
    throw new OutputError(path, `cannot write ${path}: ${systemReason(e)}`, { refused: false, code });
  }
  return path;
}

/**
 * The report as a fragment for a notebook cell: its style (scoped to .fascicle-report),
 * one inlined plotly.js and its main element, without the page's html, head and body.
 */
export function reportFragment(input: Omit<ReportInput, 'bundle'>): string {
  const html = reportHtml({ ...input, bundle: false });
  return html
    .slice(html.indexOf('<style>'), html.lastIndexOf('</body>'))
    .replace('</head><body>', '')
    .replace('body{margin:0}', '');
}

/** Show the report in a notebook cell (reportFragment); outside a notebook, print a one-line summary. */
export function showReport(input: Omit<ReportInput, 'bundle'>): void {
  const t = input.study.tables;
  const text =
    `Study report: ${t.components.length} component rows, ${t.flags.length} flags, ` +
    `${(input.figures ?? studyFigureList(input.study)).length} figures; writeReportHtml(dir, input) writes the page`;
  displayHtml(reportFragment(input), text);
}

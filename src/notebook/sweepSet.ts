/**
 * Rich display of a SweepSet in a notebook: an HTML summary (sweeps, samples, sampling
 * rate, time span, units, each condition with its levels, source files and the
 * processing history with every option). Every user string is escaped.
 */
import type { ConditionValue, Conditions, Source, Step } from '../sweeps/conditions';
import { conditionKeys } from '../sweeps/conditions';
import { escapeHtml, formatCell, displayHtml } from './html';
import { unitText } from '../plot/labels';

/** What the display reads of a SweepSet (a SweepSet is one; the type keeps this module free of SweepSet.ts). */
export interface SweepSetView {
  readonly nSweeps: number;
  readonly nSamples: number;
  readonly fs: number;
  readonly t0Ms: number;
  readonly units: string;
  readonly conditions: readonly Conditions[];
  readonly sources: readonly Source[];
  readonly history: readonly Step[];
  timeAt(i: number): number;
  levels(key: string): ConditionValue[];
  summary(): string;
}

const fmt = (x: number) => String(Number(x.toPrecision(6)));
const CELL = 'style="text-align:left;padding:1px 8px 1px 0;vertical-align:top"';

/** A step's options as short text: key=value, nested values as JSON. */
function optionsText(o: Record<string, unknown>): string {
  return Object.entries(o)
    .map(([k, v]) => `${k}=${typeof v === 'object' && v !== null ? JSON.stringify(v) : formatCell(v)}`)
    .join(', ');
}

/** The HTML summary of a set (what `showSweepSet` displays). */
export function sweepSetHtml(set: SweepSetView): string {
  const last = set.timeAt(set.nSamples - 1);
  const head =
    `<b>SweepSet</b>: ${set.nSweeps} sweep${set.nSweeps === 1 ? '' : 's'} × ${set.nSamples} samples at ${fmt(set.fs / 1000)} kHz ` +
    `(${fmt(set.t0Ms)} to ${fmt(last)} ms), ${unitText(set.units)}`;
  const rows: string[] = [];
  for (const k of conditionKeys(set.conditions)) {
    if (k === 'fileSweep') continue;
    const lv = set.levels(k).filter((v) => v !== null);
    const shown = lv
      .slice(0, 12)
      .map((v) => escapeHtml(formatCell(v)))
      .join(', ');
    rows.push(
      `<tr><th ${CELL}>${escapeHtml(k)}</th><td ${CELL}>${lv.length} level${lv.length === 1 ? '' : 's'}</td><td ${CELL}>${shown}${lv.length > 12 ? ', …' : ''}</td></tr>`,
    );
  }
  const conds = rows.length
    ? `<table style="border-collapse:collapse;font:12px sans-serif"><caption style="text-align:left"><i>conditions</i></caption>${rows.join('')}</table>`
    : '<p><i>no conditions</i></p>';
  const src = set.sources.length
    ? `<details><summary>${set.sources.length} source file${set.sources.length === 1 ? '' : 's'}</summary><ul>${set.sources.map((s) => `<li><code>${escapeHtml(s.path)}</code> (${s.bytes} bytes, sha256 ${escapeHtml(s.sha256.slice(0, 12))}…)</li>`).join('')}</ul></details>`
    : '';
  const hist = set.history.length
    ? `<details><summary>history: ${set.history.map((h) => escapeHtml(h.verb)).join(' → ')}</summary><ol>${set.history.map((h) => `<li><code>${escapeHtml(h.verb)}</code> ${escapeHtml(optionsText(h.options))} <span style="color:#666">(fascicle ${escapeHtml(h.version)})</span></li>`).join('')}</ol></details>`
    : '<p><i>no processing steps</i></p>';
  return `<div class="fascicle-sweepset" style="font:12px sans-serif">${head}${conds}${src}${hist}</div>`;
}

/** Show a set's HTML summary in a tslab cell (its text summary elsewhere). */
export function showSweepSet(set: SweepSetView): void {
  displayHtml(sweepSetHtml(set), set.summary());
}

/**
 * Progress that updates in place: in a tslab cell through a display handle, on a
 * terminal through cli-progress; silent elsewhere. Updates are rate-limited (at most
 * every 200 ms) because the notebook throttles frequent outputs.
 */
import { tslabDisplay, escapeHtml } from './html';

export interface Progress {
  tick(label?: string): void;
  done(): void;
}

export function progress(total: number, title = 'working'): Progress {
  let n = 0;
  let last = 0;
  const t = tslabDisplay();
  if (t && t.newDisplay) {
    const d = t.newDisplay() as { html(s: string): void };
    const draw = (label: string) =>
      d.html(
        `<div style="font:12px sans-serif">${escapeHtml(title)} <progress max="${total}" value="${n}"></progress> ${n}/${total} ${escapeHtml(label)}</div>`,
      );
    draw('');
    return {
      tick(label = '') {
        n++;
        const now = Date.now();
        if (now - last > 200 || n === total) {
          last = now;
          draw(label);
        }
      },
      done() {
        n = total;
        draw('done');
      },
    };
  }
  if (process.stderr.isTTY) {
    // eslint-disable-next-line @typescript-eslint/no-var-requires
    const { SingleBar, Presets } = require('cli-progress');
    const bar = new SingleBar(
      { format: `${title} [{bar}] {value}/{total} {label}`, stream: process.stderr },
      Presets.shades_classic,
    );
    bar.start(total, 0, { label: '' });
    return {
      tick(label = '') {
        n++;
        bar.update(n, { label });
      },
      done() {
        bar.update(total);
        bar.stop();
      },
    };
  }
  return {
    tick() {
      n++;
    },
    done() {
      /* nothing to show */
    },
  };
}

/**
 * Leftover temporary folders of an interrupted bundle write are removed on the next run even when
 * the dead writer's pid has since been reused by another, live process (pids wrap: pid_max on Linux
 * is 32768 by default on many systems; common practice, no source). The marker names its writer by
 * pid and process start time (/proc/<pid>/stat field 22, proc(5) manual page).
 */
import { describe, it, expect } from 'vitest';
import { spawn } from 'node:child_process';
import { existsSync, mkdirSync, mkdtempSync, readFileSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { cleanLeftovers, TEMP_MARKER } from '../../src/report/bundle';

const startOf = (pid: number) => {
  const s = readFileSync(`/proc/${pid}/stat`, 'utf8');
  return s.slice(s.lastIndexOf(')') + 2).split(' ')[19];
};

describe.runIf(existsSync('/proc/self/stat'))('cleanLeftovers and reused pids', () => {
  it('removes a folder whose pid is alive but started later than the writer; keeps a live writer', async () => {
    const work = mkdtempSync(join(tmpdir(), 'fascicle-leftovers-'));
    const child = spawn(process.execPath, ['-e', 'setTimeout(() => {}, 20000)'], { stdio: 'ignore' });
    try {
      const pid = child.pid!;
      const reused = join(work, `.b.tmp-${pid}-abc-111111`);
      const live = join(work, `.b.old-${pid}-abc-222222`);
      for (const d of [reused, live]) mkdirSync(d);
      // the writer of `reused` was another process with this pid, started at another time
      const other = String(Number(startOf(pid)) - 1);
      writeFileSync(join(reused, TEMP_MARKER), `temporary\nwriter: ${pid} ${other}\n`);
      writeFileSync(join(live, TEMP_MARKER), `temporary\nwriter: ${pid} ${startOf(pid)}\n`);
      const removed = cleanLeftovers(join(work, 'b'));
      expect(removed).toEqual([reused]);
      expect(existsSync(reused)).toBe(false);
      expect(existsSync(live)).toBe(true);
    } finally {
      child.kill();
    }
  });
});

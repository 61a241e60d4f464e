// One measured process for the bench: wall time from here, CPU and peak memory
// from /usr/bin/time -v (or, without it, the bench's own probe, rss-probe.mjs).
import { spawn } from 'node:child_process';
import { existsSync, readFileSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { dirname, join, resolve } from 'node:path';
import { fileURLToPath } from 'node:url';
import { performance } from 'node:perf_hooks';

const ROOT = resolve(dirname(fileURLToPath(import.meta.url)), '..');
/** GNU time for peak memory; PHASEBOOK_BENCH_TIME=none uses the process's own accounting instead. */
const TIME = process.env.PHASEBOOK_BENCH_TIME ?? '/usr/bin/time';

/** Run one process; wall time from here, CPU and peak memory from /usr/bin/time -v (or the probe). */
export async function measure(cmd, args, options = {}) {
  const haveTime = existsSync(TIME);
  const stats = join(options.scratch ?? tmpdir(), `stats-${process.pid}-${Math.random().toString(36).slice(2)}.txt`);
  const argv = haveTime ? ['-v', '-o', stats, cmd, ...args] : ['--import', join(ROOT, 'bench', 'rss-probe.mjs'), ...args];
  const exe = haveTime ? TIME : cmd;
  const env = { ...process.env, NO_COLOR: '1', PHASEBOOK_BENCH_PROBE: stats };
  const t0 = performance.now();
  const { code, stdout, stderr } = await new Promise((res, rej) => {
    const child = spawn(exe, argv, { cwd: ROOT, env, stdio: ['ignore', 'pipe', 'pipe'] });
    let out = '';
    let err = '';
    child.stdout.on('data', (d) => (out += d));
    child.stderr.on('data', (d) => (err += d));
    child.on('error', rej);
    child.on('close', (c) => res({ code: c, stdout: out, stderr: err }));
  });
  const wallS = (performance.now() - t0) / 1000;
  let peakMb = NaN;
  let cpuS = NaN;
  if (existsSync(stats)) {
    const text = readFileSync(stats, 'utf8');
    rmSync(stats, { force: true });
    if (haveTime) {
      const kb = /Maximum resident set size \(kbytes\): (\d+)/.exec(text);
      const user = /User time \(seconds\): ([\d.]+)/.exec(text);
      const sys = /System time \(seconds\): ([\d.]+)/.exec(text);
      if (kb) peakMb = Number(kb[1]) / 1024;
      if (user && sys) cpuS = Number(user[1]) + Number(sys[1]);
    } else {
      const j = JSON.parse(text);
      peakMb = j.maxRssKb / 1024;
      cpuS = j.userS + j.sysS;
    }
  }
  // phasebook exits 1 when the batch has QC findings: that is a finished run.
  const ok = options.okCodes ? options.okCodes.includes(code) : code === 0;
  if (!ok) throw new Error(`${cmd} ${args.join(' ')} exited with ${code}\n${stderr.slice(-2000)}`);
  return { wallS, cpuS, peakMb, stdout, code };
}

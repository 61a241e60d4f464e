/**
 * Fallback peak-memory probe when /usr/bin/time is missing: preloaded with
 * `node --import ./bench/rss-probe.mjs`, it writes the process's own peak
 * resident set size (KiB, from process.resourceUsage) and CPU times to the file
 * named by PHASEBOOK_BENCH_PROBE when the process exits.
 */
import { writeFileSync } from 'node:fs';

const file = process.env.PHASEBOOK_BENCH_PROBE;
if (file) {
  process.on('exit', () => {
    const u = process.resourceUsage();
    writeFileSync(file, JSON.stringify({ maxRssKb: u.maxRSS, userS: u.userCPUTime / 1e6, sysS: u.systemCPUTime / 1e6 }));
  });
}

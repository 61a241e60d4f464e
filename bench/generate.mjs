/**
 * Synthetic canonical worklists of any size, for the benchmark and the streaming
 * tests. An invented scenario: a contract lab extracts water samples in
 * preparation batches; each batch holds, for every analyte, 20 samples, a
 * method blank, an lcs/lcsd pair, an ms/msd pair spiked into the batch's first
 * sample and a duplicate of its second sample. Two analytes are neutral, one is
 * a weak acid and one a weak base (extracted at a pH that keeps most of it
 * neutral), so the ionisable path of the distribution ratio is exercised.
 *
 * Rows are written in the order a bench sheet lists them: for each position of
 * the batch (blank, lcs, lcsd, samples, ms, msd, dup) every analyte in turn, so
 * a control's parent always comes before it. The headers are exactly the
 * canonical fields of templates/generic-lle.yaml, plus two free-text columns
 * (instrument and note) that are carried through verbatim.
 *
 * Deterministic: the same size and seed give the same bytes.
 *
 *   node bench/generate.mjs ROWS [FILE] [--seed N]
 */
import { createWriteStream } from 'node:fs';
import { once } from 'node:events';
import { finished } from 'node:stream/promises';
import { pathToFileURL } from 'node:url';
import { CANONICAL_FIELDS } from '../dist/domain/fields.js';
import { mulberry32 } from '../samples/seeded-random.mjs';

// Every canonical field but log_k and istd_response (from the build: the bench runs the built CLI anyway; the
// floor computes no internal-standard judgement, and the bench worklist keeps its shape), then two free-text
// columns a lab's export would carry.
export const HEADERS = [...CANONICAL_FIELDS.filter((f) => f !== 'log_k' && f !== 'istd_response'), 'instrument', 'note'];

/** Invented analytes: K of the neutral form, pKa and type, a typical level in ng/mL. */
export const ANALYTES = [
  { name: 'veltrazine', k: 180, pka: '', acidBase: 'neutral', ph: 7.0, level: 12 },
  { name: 'moranol', k: 35, pka: '', acidBase: 'neutral', ph: 7.0, level: 4 },
  { name: 'cresophen acid', k: 420, pka: 4.6, acidBase: 'acid', ph: 2.5, level: 25 },
  { name: 'dubrelamine', k: 260, pka: 9.3, acidBase: 'base', ph: 11.5, level: 8 },
];

export const SAMPLES_PER_BATCH = 20;
/** Positions of one batch, in worklist order. */
const POSITIONS = [
  'blank',
  'lcs',
  'lcsd',
  ...Array.from({ length: SAMPLES_PER_BATCH }, (_, i) => `sample:${i + 1}`),
  'ms',
  'msd',
  'dup',
];
export const ROWS_PER_BATCH = POSITIONS.length * ANALYTES.length;

/** Four significant figures, as an instrument export shows them. */
function sig4(x) {
  return Number(x.toPrecision(4)).toString();
}

/** Extraction efficiency (fraction) the scenario's chemistry implies. */
function efficiency(a, vAq, vOrg, n) {
  const f = a.acidBase === 'acid' ? 1 / (1 + 10 ** (a.ph - a.pka)) : a.acidBase === 'base' ? 1 / (1 + 10 ** (a.pka - a.ph)) : 1;
  return 1 - (vAq / (vAq + a.k * f * vOrg)) ** n;
}

/**
 * The worklist's lines (header first), lazily: `rows` data rows, the last batch
 * cut short when `rows` is not a multiple of ROWS_PER_BATCH.
 */
export function* worklistLines(rows, options = {}) {
  const rand = mulberry32(options.seed ?? 20261101);
  yield HEADERS.join(',');
  let written = 0;
  for (let b = 1; written < rows; b++) {
    const batch = `PB${String(b).padStart(6, '0')}`;
    const instrument = `GC-MS ${1 + (b % 3)}`;
    // Per batch and analyte: the true concentrations of the 20 samples.
    const truth = ANALYTES.map((a) => Array.from({ length: SAMPLES_PER_BATCH }, () => a.level * (0.2 + 3 * rand() * rand())));
    const msConc = new Map();
    for (const pos of POSITIONS) {
      for (let ai = 0; ai < ANALYTES.length; ai++) {
        if (written >= rows) return;
        const a = ANALYTES[ai];
        const vAq = 250;
        const vOrg = 30;
        const n = 3;
        const finalVolume = 1;
        const dilution = rand() < 0.05 ? 10 : 1;
        const e = efficiency(a, vAq, vOrg, n);
        const toExtract = (c0) => (c0 * vAq * e) / (dilution * finalVolume);
        const spike = 2 * a.level;
        let id;
        let type;
        let parent = '';
        let c0;
        let spikeText = '';
        let note = '';
        if (pos === 'blank') {
          id = `${batch}-MB`;
          type = 'blank';
          c0 = a.level * 0.01 * rand();
        } else if (pos === 'lcs' || pos === 'lcsd') {
          id = `${batch}-${pos.toUpperCase()}`;
          type = pos;
          if (pos === 'lcsd') parent = `${batch}-LCS`;
          c0 = pos === 'lcs' ? spike * (0.85 + 0.3 * rand()) : msConc.get(`lcs${ai}`) * (0.92 + 0.16 * rand());
          if (pos === 'lcs') msConc.set(`lcs${ai}`, c0);
          spikeText = String(spike);
        } else if (pos.startsWith('sample:')) {
          const i = Number(pos.slice(7));
          id = `${batch}-S${String(i).padStart(2, '0')}`;
          type = 'sample';
          c0 = truth[ai][i - 1];
          if (i === 7) note = 'sediment, "settled" before extraction';
        } else if (pos === 'ms' || pos === 'msd') {
          id = `${batch}-S01-${pos.toUpperCase()}`;
          type = pos;
          parent = `${batch}-S01`;
          c0 = truth[ai][0] + spike * (0.8 + 0.35 * rand());
          spikeText = String(spike);
          if (pos === 'msd') c0 = msConc.get(ai) * (0.92 + 0.16 * rand());
          else msConc.set(ai, c0);
        } else {
          id = `${batch}-S02-DUP`;
          type = 'dup';
          parent = `${batch}-S02`;
          c0 = truth[ai][1] * (0.92 + 0.16 * rand());
        }
        const fields = [
          id,
          type,
          parent,
          batch,
          a.name,
          sig4(toExtract(c0)),
          String(vAq),
          String(vOrg),
          String(n),
          String(finalVolume),
          String(dilution),
          String(a.k),
          a.acidBase === 'neutral' ? '' : String(a.ph),
          String(a.pka),
          a.acidBase,
          spikeText,
          '',
          String(a.level / 10),
          instrument,
          note.includes('"') || note.includes(',') ? `"${note.replace(/"/g, '""')}"` : note,
        ];
        yield fields.join(',');
        written++;
      }
    }
  }
}

/** Write a worklist of `rows` data rows to `path`. */
export async function writeWorklist(path, rows, options = {}) {
  const out = createWriteStream(path);
  let chunk = [];
  let size = 0;
  for (const line of worklistLines(rows, options)) {
    chunk.push(line);
    size += line.length;
    if (size > 1 << 20) {
      if (!out.write(chunk.join('\n') + '\n')) await once(out, 'drain');
      chunk = [];
      size = 0;
    }
  }
  if (chunk.length) out.write(chunk.join('\n') + '\n');
  out.end();
  await finished(out);
}

if (import.meta.url === pathToFileURL(process.argv[1] ?? '').href) {
  const args = process.argv.slice(2);
  const seedAt = args.indexOf('--seed');
  const seed = seedAt >= 0 ? Number(args.splice(seedAt, 2)[1]) : undefined;
  const rows = Number(args[0]);
  if (!Number.isInteger(rows) || rows < 1) {
    process.stderr.write('usage: node bench/generate.mjs ROWS [FILE] [--seed N]\n');
    process.exit(2);
  }
  if (args[1]) await writeWorklist(args[1], rows, { seed });
  else for (const line of worklistLines(rows, { seed })) process.stdout.write(line + '\n');
}

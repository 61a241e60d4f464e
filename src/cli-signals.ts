/**
 * The command line's signals (issue 17: signal handling belongs to the command line, the writer
 * never exits the process). SIGINT and SIGTERM ask the writer what may happen now
 * (write/atomic.ts, interruptArrived), then act: wait for the outputs to be put back, let a
 * finished run complete, or remove the live temp files and exit with 128 + the signal number
 * (130 for SIGINT, 143 for SIGTERM; common practice: POSIX shells report a death by signal so).
 * At exit, whatever the reason, live temp files are removed.
 */
import { interruptArrived, removeLiveTempFiles } from './write/atomic.js';

const onSignal = (code: number) => () => {
  const decision = interruptArrived(code);
  if (decision === 'deferred') return; // commitAll rolls the outputs back and throws Interrupted
  if (decision === 'finishing') {
    process.stderr.write('phasebook: interrupted after the outputs were complete; finishing the run\n');
    return;
  }
  removeLiveTempFiles();
  process.exit(code);
};
const onSigint = onSignal(130);
const onSigterm = onSignal(143);

/** Install the handlers; safe to call more than once (each is added once). */
export function installSignalHandlers(): void {
  if (!process.listeners('SIGINT').includes(onSigint)) process.on('SIGINT', onSigint);
  if (!process.listeners('SIGTERM').includes(onSigterm)) process.on('SIGTERM', onSigterm);
  if (!process.listeners('exit').includes(removeLiveTempFiles)) process.on('exit', removeLiveTempFiles);
}

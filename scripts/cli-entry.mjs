#!/usr/bin/env node
// The command line's entry, copied to dist/cli.js by scripts/bundle-cli.mjs:
// it runs the bundle dist/cli-bundle.js (the whole command line but the chart
// drawing, in one file) with V8's code cache kept in the user's cache folder
// (see bundle-loader.mjs).
import { runBundle } from './bundle-loader.cjs';

// Node warns about `Buffer()` (DEP0005) only when the caller is outside
// node_modules. Bundled dependency code is (exceljs's zip writer calls
// `new Buffer`), so this entry silences DEP0005 as Node does for node_modules.
// phasebook's own code does not call `Buffer()`.
const emitWarning = process.emitWarning;
process.emitWarning = function (warning, ...rest) {
  if (rest[1] === 'DEP0005' || (rest[0] && typeof rest[0] === 'object' && rest[0].code === 'DEP0005')) return;
  return emitWarning.call(this, warning, ...rest);
};

runBundle(new URL('./', import.meta.url).href, 'cli-bundle', { codeCache: true });

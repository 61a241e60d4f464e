// The library for `require`, copied to dist/index.cjs by scripts/bundle-cli.mjs: it
// runs the bundle dist/lib-bundle.js (src/index.ts and what it uses, in one file;
// the report's charts come from dist/chart-bundle.js) through the loader the
// command line uses (see scripts/bundle-loader.mjs), without a code cache: a
// script that uses the library loads it once and keeps it, and a library writes
// no files of its own accord. dist/index.js gives the same exports to `import`.
'use strict';
const { pathToFileURL } = require('node:url');
const { runBundle } = require('./bundle-loader.cjs');

module.exports = runBundle(pathToFileURL(__dirname + '/').href, 'lib-bundle');

/**
 * Fault injection for the built CLI, preloaded with `node --require`: once
 * FAIL_WRITES_AFTER bytes (default 0) have been written in all to files under
 * FAIL_WRITES_DIR, every further write there fails with FAIL_WRITES_CODE
 * (ENOSPC, EIO, EACCES, ...), as a full or failing disk does; with the code
 * HANG it never answers at all (a write whose callback never comes). It patches the
 * fs functions the writers reach at call time (write streams use fs.open,
 * fs.write and fs.writev; the report uses fs.promises.writeFile); the bundle
 * looks them up on the module objects, so the patch is seen.
 */
'use strict';
const fs = require('node:fs');
const path = require('node:path');

const dir = process.env.FAIL_WRITES_DIR ? path.resolve(process.env.FAIL_WRITES_DIR) : undefined;
const code = process.env.FAIL_WRITES_CODE || 'ENOSPC';
const after = Number(process.env.FAIL_WRITES_AFTER || 0);
let written = 0;
const watched = new Set();

const under = (p) => dir !== undefined && typeof p === 'string' && path.resolve(p).startsWith(dir + path.sep);
const fault = (syscall) => Object.assign(new Error(`${code}: injected fault, ${syscall}`), { code, errno: -28, syscall });
/** Bytes this write adds; an error when it would pass the budget. */
function take(bytes, syscall) {
  if (written + bytes > after) return fault(syscall);
  written += bytes;
  return undefined;
}
const sizeOf = (data) => (typeof data === 'string' ? Buffer.byteLength(data) : data.byteLength);

if (dir !== undefined) {
  const open = fs.open;
  fs.open = function (p, ...rest) {
    const cb = rest[rest.length - 1];
    rest[rest.length - 1] = (err, fd) => {
      if (!err && under(p)) watched.add(fd);
      cb(err, fd);
    };
    return open.call(this, p, ...rest);
  };
  const close = fs.close;
  fs.close = function (fd, ...rest) {
    watched.delete(fd);
    return close.call(this, fd, ...rest);
  };
  const write = fs.write;
  fs.write = function (fd, data, ...rest) {
    if (watched.has(fd)) {
      const err = take(sizeOf(data), 'write');
      if (err) return code === 'HANG' ? undefined : process.nextTick(rest[rest.length - 1], err);
    }
    return write.call(this, fd, data, ...rest);
  };
  const writev = fs.writev;
  fs.writev = function (fd, buffers, ...rest) {
    if (watched.has(fd)) {
      const err = take(buffers.reduce((n, b) => n + b.byteLength, 0), 'writev');
      if (err) return code === 'HANG' ? undefined : process.nextTick(rest[rest.length - 1], err);
    }
    return writev.call(this, fd, buffers, ...rest);
  };
  const writeFile = fs.promises.writeFile;
  fs.promises.writeFile = async function (p, data, ...rest) {
    if (under(p)) {
      const err = take(sizeOf(data), 'write');
      if (err) return code === 'HANG' ? new Promise(() => undefined) : Promise.reject(err);
    }
    return writeFile.call(this, p, data, ...rest);
  };
}

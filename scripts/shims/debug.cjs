// Build shim for the `debug` package: @stdlib's gammaincinv (chi-square quantiles) creates two `debug` loggers for
// overflow warnings that print only with DEBUG=gammaincinv:*. Loading the real package at start-up pulls in tty and
// colour detection (~15-40 ms per process, measured with --cpu-prof), on every run of the tool; this no-op logger
// keeps the calls and drops that cost. Aliased in scripts/build.mjs.
'use strict';
function createDebug() {
  const log = function () {};
  log.enabled = false;
  log.extend = createDebug;
  return log;
}
createDebug.enable = function () {};
createDebug.disable = function () { return ''; };
createDebug.enabled = function () { return false; };
module.exports = createDebug;
module.exports.default = createDebug;

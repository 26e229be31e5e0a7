/**
 * Loading the command line's bundle (dist/cliMain.js, about 1.6 MB of JavaScript) with a V8 code cache, so a run
 * starts from the bytecode an earlier run compiled instead of parsing and compiling the bundle again.
 *
 * Why by hand: Node 22 has this built in (`module.enableCompileCache`), Node 20, which the tool supports, does not;
 * no npm package does it for a CommonJS bundle without hooking every `require`. What it saves: parsing the bundle
 * took ~33 ms of every run on the 2-core development machine, and compiling each function on its first call more
 * (README "Performance" has the measurement). The cache is made after the run (`createCachedData` then holds every
 * function the run compiled), once, and read by the runs after it.
 *
 * Where: one folder per user in the system's temporary folder (`residuum-code-cache-<uid>`, mode 0700, used only when
 * this user owns it and nobody else may write to it: code read from a cache is run). `RESIDUUM_CODE_CACHE=0` turns
 * the cache off; `RESIDUUM_CODE_CACHE=/some/dir` puts it there. A cache file is named by a hash of what makes it
 * valid: the bundle's bytes, the Node version and architecture, and the V8 flags of the process (V8 rejects a cache
 * made under other flags, and the launcher's child runs with flags of its own). A cache V8 rejects anyway is made
 * again. Every failure (no folder, a read-only disk, a damaged file) only means a run without the cache.
 */
import { createHash } from 'node:crypto';
import { mkdirSync, readdirSync, readFileSync, renameSync, statSync, unlinkSync, writeFileSync } from 'node:fs';
import Module from 'node:module';
import { tmpdir } from 'node:os';
import path from 'node:path';
import { Script } from 'node:vm';

/** What became of the cache in one load. */
export type CacheUse = 'off' | 'used' | 'made' | 'rejected';

/** The bundle's exports and what became of its cache. */
export interface LoadedBundle {
  exports: unknown;
  cache: CacheUse;
  /**
   * Write the cache now (when it was made or rejected; once): done when the process exits, so the cache holds every
   * function the run compiled. Never throws.
   */
  save(): void;
}

/** Node's CommonJS internals the loader needs (present in every Node version the tool supports). */
interface ModuleInternals {
  wrap(source: string): string;
  _nodeModulePaths(dir: string): string[];
  _resolveFilename(request: string, parent: NodeJS.Module): string;
}

/**
 * The cache folder for `env`: undefined when the cache is off or the folder cannot be used safely (not a folder,
 * another owner, writable by others).
 */
export function cacheFolder(env: NodeJS.ProcessEnv = process.env): string | undefined {
  const given = env.RESIDUUM_CODE_CACHE;
  if (given === '0') return undefined;
  const uid = typeof process.getuid === 'function' ? process.getuid() : undefined;
  const dir = given || path.join(tmpdir(), `residuum-code-cache-${uid ?? 'user'}`);
  try {
    mkdirSync(dir, { recursive: true, mode: 0o700 });
    const st = statSync(dir);
    if (!st.isDirectory()) return undefined;
    if (uid !== undefined && (st.uid !== uid || (st.mode & 0o022) !== 0)) return undefined;
    return dir;
  } catch {
    return undefined;
  }
}

/** The cache file's name for a bundle: its base name and a hash of the bundle, the runtime and the V8 flags. */
export function cacheName(file: string, source: string, execArgv: readonly string[] = process.execArgv): string {
  const key = createHash('sha256')
    .update(source).update('\0').update(`${process.version} ${process.arch}`).update('\0').update(execArgv.join(' '))
    .digest('hex').slice(0, 24);
  return `${path.basename(file)}.${key}.v8cache`;
}

/**
 * Run the CommonJS bundle `file` as Node's `require` would (its own `module`, `exports`, `require`, `__filename`,
 * `__dirname`) and return its exports, using and making a code cache (see the file comment).
 * @param options.folder the cache folder (default {@link cacheFolder}; null: no cache)
 * @param options.flags V8 flags set at run time (`v8.setFlagsFromString`) before this load: part of the cache's name,
 *   as the process's own flags are
 */
export function loadBundle(file: string, options: { folder?: string | null; flags?: readonly string[] } = {}): LoadedBundle {
  const source = readFileSync(file, 'utf8');
  const folder = options.folder === undefined ? cacheFolder() ?? null : options.folder;
  const cacheFile = folder !== null ? path.join(folder, cacheName(file, source, [...process.execArgv, ...(options.flags ?? [])])) : undefined;
  let cachedData: Buffer | undefined;
  if (cacheFile !== undefined) {
    try { cachedData = readFileSync(cacheFile); } catch { /* none yet */ }
  }
  const internals = Module as unknown as ModuleInternals;
  const script = new Script(internals.wrap(source), { filename: file, cachedData });
  const mod = new Module(file, module);
  mod.filename = file;
  mod.paths = internals._nodeModulePaths(path.dirname(file));
  const req = ((id: string) => mod.require(id)) as NodeJS.Require;
  req.resolve = ((request: string) => internals._resolveFilename(request, mod)) as NodeJS.RequireResolve;
  req.main = require.main;
  req.cache = require.cache;
  const cache: CacheUse = cacheFile === undefined ? 'off' : cachedData === undefined ? 'made' : script.cachedDataRejected ? 'rejected' : 'used';
  let pending = cacheFile !== undefined && cache !== 'used';
  const save = (): void => {
    if (!pending || cacheFile === undefined) return;
    pending = false;
    writeCache(cacheFile, script, `${path.basename(file)}.`);
  };
  // After the run: the data then holds every function the run compiled, not only the bundle's top level.
  if (pending) process.once('exit', save);
  (script.runInThisContext() as (...a: unknown[]) => void).call(mod.exports, mod.exports, req, mod, file, path.dirname(file));
  mod.loaded = true;
  return { exports: mod.exports, cache, save };
}

/**
 * Write the script's cache data atomically (a temporary file renamed), then drop caches of the same bundle (name
 * starting with `prefix`) unused for a day: those of earlier builds, which no run needs again.
 */
function writeCache(cacheFile: string, script: Script, prefix: string): void {
  try {
    const tmp = `${cacheFile}.${process.pid}.tmp`;
    writeFileSync(tmp, script.createCachedData(), { mode: 0o600 });
    renameSync(tmp, cacheFile);
    const dir = path.dirname(cacheFile);
    for (const f of readdirSync(dir)) {
      const other = path.join(dir, f);
      if (other === cacheFile || !f.startsWith(prefix) || !f.endsWith('.v8cache')) continue;
      try { if (Date.now() - statSync(other).atimeMs > STALE_MS) unlinkSync(other); } catch { /* gone already */ }
    }
  } catch {
    // a read-only or full disk: the next run goes without the cache, as this one would have
  }
}

/** A cache file not read for this long is taken to belong to an old build and deleted when a new one is written. */
const STALE_MS = 86_400_000;

/**
 * Swap two folders in one step (Linux renameat2 with RENAME_EXCHANGE), the only operation that
 * replaces a whole set of files at once. Two ways to reach it, tried in order: the small addon in
 * native/ (built from source at install, never downloaded), then Debian's Python calling the C
 * library through ctypes. `SILL_EXCHANGE=addon|python|none` picks one (tests, troubleshooting).
 * When neither is there, exchangeWay() is null and output folders commit through a journal.
 */
import { createRequire } from 'node:module';
import { spawnSync } from 'node:child_process';
import { constants } from 'node:os';
import { fileURLToPath } from 'node:url';

export type ExchangeWay = 'addon' | 'python';

interface Addon { exchange(a: string, b: string): number }

const ADDON_URL = new URL('../../native/build/exchange.node', import.meta.url);
const PYTHONS = ['/usr/bin/python3', 'python3'];
// prints 0 or the errno of renameat2(AT_FDCWD, a, AT_FDCWD, b, RENAME_EXCHANGE); "probe" only checks the call exists
const PY = [
  'import ctypes, os, sys',
  'libc = ctypes.CDLL(None, use_errno=True)',
  'f = libc.renameat2',
  'f.argtypes = [ctypes.c_int, ctypes.c_char_p, ctypes.c_int, ctypes.c_char_p, ctypes.c_uint]',
  'if sys.argv[1] == "probe": print("ok"); sys.exit(0)',
  'r = f(-100, os.fsencode(sys.argv[1]), -100, os.fsencode(sys.argv[2]), 2)',
  'print(0 if r == 0 else ctypes.get_errno())',
].join('\n');

let way: ExchangeWay | null | undefined;
let addon: Addon | null = null;
let python: string | null = null;

function loadAddon(): Addon | null {
  if (process.platform !== 'linux') return null;
  try {
    return createRequire(import.meta.url)(fileURLToPath(ADDON_URL)) as Addon;
  } catch {
    return null;
  }
}

function findPython(): string | null {
  if (process.platform !== 'linux') return null;
  for (const py of PYTHONS) {
    const r = spawnSync(py, ['-c', PY, 'probe'], { encoding: 'utf8', timeout: 10_000 });
    if (!r.error && r.status === 0 && r.stdout.trim() === 'ok') return py;
  }
  return null;
}

/** How this process can swap two folders, or null (found once, then remembered). */
export function exchangeWay(): ExchangeWay | null {
  if (way !== undefined) return way;
  const want = process.env.SILL_EXCHANGE;
  way = null;
  if (want === 'none') return way;
  if (want !== 'python' && (addon = loadAddon())) way = 'addon';
  else if (want !== 'addon' && (python = findPython())) way = 'python';
  return way;
}

/**
 * Swap folders `a` and `b` (same file system). Returns null on success, otherwise the error code
 * ('EXDEV', 'EBUSY', 'EINVAL' when the file system cannot exchange, 'ENOSYS' when the kernel
 * cannot) — the caller falls back; nothing has moved then.
 */
export function exchangeFolders(a: string, b: string): string | null {
  const w = exchangeWay();
  if (w === null) return 'ENOSYS';
  let errno: number;
  if (w === 'addon') {
    errno = addon!.exchange(a, b);
  } else {
    const r = spawnSync(python!, ['-c', PY, a, b], { encoding: 'utf8', timeout: 60_000 });
    errno = !r.error && r.status === 0 && /^\d+$/.test(r.stdout.trim()) ? Number(r.stdout.trim()) : constants.errno.ENOSYS;
  }
  if (errno === 0) return null;
  const code = Object.entries(constants.errno).find(([, n]) => n === errno)?.[0];
  return code ?? `errno ${errno}`;
}

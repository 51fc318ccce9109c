/**
 * A progress bar on stderr for long tile-by-tile runs: the stage, tiles done of the total, the time
 * since the run started and an estimate of the time the stage still needs. Drawn only when stderr
 * is a terminal (or SILL_STDERR_TTY=1, as for the stage line of src/cli/common.ts); nothing
 * otherwise. `progressLine` makes the line and is tested on its own.
 */

/** What the bar shows at one instant. */
export interface ProgressState {
  stage: string;
  /** Tiles done and the total of the stage (a stage without tiles has neither). */
  done?: number;
  total?: number;
  /** Milliseconds since the run started, and since the stage started. */
  elapsedMs: number;
  stageMs: number;
}

/** 75 s → "1:15", 3725 s → "1:02:05". */
export function clock(ms: number): string {
  const s = Math.max(0, Math.round(ms / 1000));
  const h = Math.floor(s / 3600), m = Math.floor((s % 3600) / 60), r = s % 60;
  const two = (x: number): string => String(x).padStart(2, '0');
  return h > 0 ? `${h}:${two(m)}:${two(r)}` : `${m}:${two(r)}`;
}

/**
 * The bar's line, at most `columns` characters: "pass 1: windows [#####.....] 8/16 tiles, 0:12 elapsed, ~0:12 left".
 * The time left is the stage's time per tile so far times the tiles left (shown once a tile is done).
 */
export function progressLine(p: ProgressState, columns = 100): string {
  const parts: string[] = [p.stage];
  const counted = p.total !== undefined && p.total > 0 && p.done !== undefined;
  if (counted) {
    const done = Math.min(p.done!, p.total!), width = 20;
    const full = Math.floor((width * done) / p.total!);
    parts.push(`[${'#'.repeat(full)}${'.'.repeat(width - full)}] ${done}/${p.total} tiles`);
  }
  let tail = `${clock(p.elapsedMs)} elapsed`;
  if (counted && p.done! > 0 && p.done! < p.total!) tail += `, ~${clock((p.stageMs / p.done!) * (p.total! - p.done!))} left`;
  const line = `${parts.join(' ')}, ${tail}`;
  return line.length <= columns ? line : line.slice(0, Math.max(0, columns - 1)) + '…';
}

/** The bar itself: redrawn in place on stderr (at most every 100 ms but for the stage's first and last tile). */
export class ProgressBar {
  private readonly on: boolean;
  private readonly t0 = Date.now();
  private stage = '';
  private stageT0 = this.t0;
  private last = 0;

  constructor(quiet: boolean | undefined) {
    this.on = !quiet && (!!process.stderr.isTTY || process.env.SILL_STDERR_TTY === '1');
  }

  update(stage: string, done?: number, total?: number): void {
    if (!this.on) return;
    const now = Date.now();
    if (stage !== this.stage) { this.stage = stage; this.stageT0 = now; }
    else if (now - this.last < 100 && done !== total && done !== 0) return;
    this.last = now;
    const line = progressLine({ stage, done, total, elapsedMs: now - this.t0, stageMs: now - this.stageT0 }, (process.stderr.columns || 100) - 1);
    process.stderr.write(`\r\x1b[K${line}`);
  }

  done(): void {
    if (this.on) process.stderr.write('\r\x1b[K');
  }
}

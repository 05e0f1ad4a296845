/**
 * Progress on stderr for long commands: a one-line indicator that redraws in
 * place (carriage return + erase line) and log lines printed above it. It is
 * on only when stderr is a terminal and --quiet was not given; otherwise
 * every call is a no-op, so pipes and CI logs stay clean.
 *
 * The line is redrawn only when the whole-percent value or the stage
 * changes, so a stage of a million steps writes at most ~100 updates.
 */
import type { CliIo } from './context.js';

export interface Progress {
  /** True when anything is printed at all. */
  readonly enabled: boolean;
  /** Shows `label [bar] pct done/total` for a stage. */
  update(stage: string, done: number, total: number): void;
  /** Shows a status text without a bar (e.g. "loading session.yaml …"). */
  status(text: string): void;
  /** Prints a log line above the indicator. */
  log(line: string): void;
  /** Removes the indicator line. */
  end(): void;
}

/** Readable names of the library's stage keys. */
const STAGE_LABELS: Record<string, string> = {
  pnp: 'PnP per view',
  frames: 'frame poses',
  'frames (robust)': 'frame poses (robust)',
};

const BAR_WIDTH = 24;
const CLEAR = '\r\x1b[2K';

/** Bar text for a fraction in [0, 1]: filled and empty cells. */
export function progressBar(fraction: number, width = BAR_WIDTH): string {
  const f = Math.min(1, Math.max(0, Number.isFinite(fraction) ? fraction : 0));
  const full = Math.round(f * width);
  return '█'.repeat(full) + '░'.repeat(width - full);
}

/** A progress indicator writing to `write`; disabled (all no-ops) unless `enabled`. */
export function createProgress(write: (text: string) => void, enabled: boolean): Progress {
  if (!enabled) {
    const noop = () => undefined;
    return { enabled: false, update: noop, status: noop, log: noop, end: noop };
  }
  let shown = '';
  let lastKey = '';
  const draw = (text: string) => {
    shown = text;
    write(`${CLEAR}${text}`);
  };
  return {
    enabled: true,
    update(stage, done, total) {
      const pct = total > 0 ? Math.floor((100 * done) / total) : 100;
      const key = `${stage}:${pct}`;
      if (key === lastKey) return;
      lastKey = key;
      const label = STAGE_LABELS[stage] ?? stage;
      draw(`${label} [${progressBar(total > 0 ? done / total : 1)}] ${String(pct).padStart(3)} % ${done}/${total}`);
    },
    status(text) {
      lastKey = '';
      draw(text);
    },
    log(line) {
      if (shown) write(CLEAR);
      write(`${line}\n`);
      if (shown) write(shown);
    },
    end() {
      if (shown) write(CLEAR);
      shown = '';
      lastKey = '';
    },
  };
}

/** Progress for a command: on when stderr is a terminal and not `quiet`. */
export function commandProgress(io: CliIo, quiet: boolean | undefined): Progress {
  return createProgress(io.stderr, !quiet && Boolean(io.stderrIsTTY));
}

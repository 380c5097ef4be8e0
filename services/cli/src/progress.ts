import cliProgress from 'cli-progress';
import type { Logger } from 'pino';

/** Progress of a long step: a bar on a terminal, a log line every 10 % elsewhere. */
export interface Progress {
  update(fraction: number, detail?: string): void;
  done(detail?: string): void;
}

export function createProgress(label: string, logger: Logger, options: { tty?: boolean } = {}): Progress {
  const tty = options.tty ?? process.stderr.isTTY === true;
  if (tty) {
    const bar = new cliProgress.SingleBar(
      {
        format: `${label.padEnd(22)} [{bar}] {percentage}% | {eta_formatted} left | {detail}`,
        stream: process.stderr,
        hideCursor: true,
        barsize: 30,
        etaBuffer: 50,
      },
      cliProgress.Presets.shades_classic,
    );
    bar.start(1000, 0, { detail: '' });
    return {
      update(fraction, detail = '') {
        bar.update(Math.round(Math.min(1, Math.max(0, fraction)) * 1000), { detail });
      },
      done(detail = 'done') {
        bar.update(1000, { detail });
        bar.stop();
      },
    };
  }
  let lastDecile = -1;
  const started = Date.now();
  return {
    update(fraction, detail) {
      const decile = Math.floor(Math.min(1, Math.max(0, fraction)) * 10);
      if (decile > lastDecile) {
        lastDecile = decile;
        logger.info({ step: label, percent: decile * 10, detail }, `${label}: ${decile * 10} %`);
      }
    },
    done(detail) {
      logger.info({ step: label, seconds: (Date.now() - started) / 1000, detail }, `${label}: done`);
    },
  };
}

import pino, { type Logger } from 'pino';
import type { Config } from './config.js';

/** One root logger per process; modules take `logger.child({ module })`. */
export function createLogger(config: Pick<Config, 'logLevel' | 'logFormat'>): Logger {
  return pino({
    level: config.logLevel,
    base: { service: 'isentrope' },
    ...(config.logFormat === 'pretty'
      ? {
          transport: {
            target: 'pino-pretty',
            options: { colorize: true, translateTime: 'SYS:HH:MM:ss', ignore: 'pid,hostname,service' },
          },
        }
      : {}),
  });
}

/**
 * The one root logger. Stages receive `logger.child({ stage })` once, at wiring time;
 * nothing is logged per item at info level.
 */
import { pino, type Logger } from 'pino';

export type { Logger } from 'pino';

/** Creates the root logger; logs go to stderr so that stdout stays for command output. */
export function createLogger(level: string): Logger {
  return pino({ level, base: { app: 'strandline' } }, pino.destination(2));
}

import type { Logger } from '../log.js';
import type { Metrics } from '../metrics.js';
import { EXIT } from './exit-codes.js';

/** The process events `watchUnhandled` listens to (the process itself, or a stand-in in tests). */
export interface ProcessEvents {
  on(event: 'unhandledRejection', listener: (reason: unknown) => void): unknown;
  on(event: 'uncaughtException', listener: (error: Error) => void): unknown;
  off(event: 'unhandledRejection', listener: (reason: unknown) => void): unknown;
  off(event: 'uncaughtException', listener: (error: Error) => void): unknown;
}

/**
 * For `serve`: a promise rejected with nobody listening is a bug somewhere in
 * background work; it is logged and counted (`plumbline_unhandled_errors_total`)
 * and the service keeps going. An uncaught exception leaves the process in an
 * unknown state: it is logged and counted, and the process exits with the
 * documented internal-error code instead of dying without a word.
 * Returns a function that removes the listeners.
 */
export function watchUnhandled(target: ProcessEvents, log: Logger, metrics: Metrics, exit: (code: number) => void = (code) => process.exit(code)): () => void {
  const onRejection = (reason: unknown) => {
    metrics.unhandledErrors.inc({ kind: 'rejection' });
    log.error({ err: reason }, 'unhandled promise rejection (a bug; the service keeps running)');
  };
  const onException = (error: Error) => {
    metrics.unhandledErrors.inc({ kind: 'exception' });
    log.fatal({ err: error }, 'uncaught exception (a bug); exiting');
    exit(EXIT.internal);
  };
  target.on('unhandledRejection', onRejection);
  target.on('uncaughtException', onException);
  return () => {
    target.off('unhandledRejection', onRejection);
    target.off('uncaughtException', onException);
  };
}

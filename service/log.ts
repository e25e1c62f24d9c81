import { pino, type Logger } from 'pino';

/**
 * Structured JSON logs on stderr, so stdout stays for command output. Secrets
 * never reach a log line: connection strings and webhook URLs are redacted by
 * key, and config values are only ever logged as references.
 */
export function createLogger(options: { level?: string; destination?: number } = {}): Logger {
  return pino(
    {
      level: options.level ?? process.env.PLUMBLINE_LOG_LEVEL ?? 'info',
      base: { service: 'plumbline' },
      redact: { paths: ['*.url', '*.webhookUrl', '*.password', '*.connectionString', 'url', 'webhookUrl'], censor: '[redacted]' },
      timestamp: pino.stdTimeFunctions.isoTime,
    },
    pino.destination({ dest: options.destination ?? 2, sync: true }),
  );
}

export type { Logger };

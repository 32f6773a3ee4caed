import { Writable } from 'node:stream';
import type { LogEntry } from 'kafkajs';
import { type DestinationStream, type Logger, pino } from 'pino';
import { kafkajsModule } from './kafkajs.js';

/**
 * Structured logs of the service: JSON lines (pino) on a pipe, one readable line per record on a
 * terminal. kafkajs's own log goes through `kafkaLogCreator` into the same logger, so one stream holds
 * everything; its transient retries (a refused connection, a group rebalancing, a coordinator loading)
 * are kept at debug level, because the service retries them and they are not problems a person must act on.
 *
 * @example
 * const log = createLogger({ level: 'info', pretty: process.stdout.isTTY === true });
 * new Kafka({ brokers, logCreator: kafkaLogCreator(log) });
 */

export type LogLevelName = 'debug' | 'info' | 'warn' | 'error';
export const LOG_LEVELS: readonly LogLevelName[] = ['debug', 'info', 'warn', 'error'];

export interface LoggerOptions {
  readonly level: LogLevelName;
  /** One readable line per record instead of JSON (for a terminal). */
  readonly pretty: boolean;
  /** Where lines go (standard output by default). */
  readonly destination?: NodeJS.WritableStream;
}

/**
 * Field names whose values are never written, wherever they sit in a record (`sasl.password`, …):
 * a second line of defence, since secrets are read from the environment and never put in a record.
 */
const REDACTED = ['password', 'secret', 'token', 'key', 'cert', 'ca', 'sasl.password', '*.password'];

export function createLogger(options: LoggerOptions): Logger {
  const out = options.destination ?? process.stdout;
  const destination: DestinationStream = options.pretty ? readableLines(out) : (out as DestinationStream);
  return pino(
    {
      level: options.level,
      base: null,
      timestamp: pino.stdTimeFunctions.isoTime,
      formatters: { level: (label) => ({ level: label }) },
      redact: { paths: REDACTED, censor: '[redacted]' },
    },
    destination,
  );
}

/** JSON lines → `12:00:01.234 INFO  message key=value …` */
function readableLines(out: NodeJS.WritableStream): DestinationStream {
  let rest = '';
  return new Writable({
    write(chunk: Buffer, _encoding, done) {
      rest += chunk.toString('utf8');
      let end = rest.indexOf('\n');
      while (end >= 0) {
        out.write(`${readable(rest.slice(0, end))}\n`);
        rest = rest.slice(end + 1);
        end = rest.indexOf('\n');
      }
      done();
    },
  });
}

function readable(line: string): string {
  let record: Record<string, unknown>;
  try {
    record = JSON.parse(line) as Record<string, unknown>;
  } catch {
    return line;
  }
  const { time, level, msg, ...fields } = record;
  const clock = typeof time === 'string' ? time.slice(11, 23) : '';
  const extra = Object.entries(fields)
    .map(([k, v]) => `${k}=${typeof v === 'string' ? v : JSON.stringify(v)}`)
    .join(' ');
  return `${clock} ${String(level).toUpperCase().padEnd(5)} ${String(msg ?? '')}${extra ? `  ${extra}` : ''}`;
}

/** kafkajs messages that report a condition it retries by itself. */
const TRANSIENT =
  /ECONNREFUSED|ECONNRESET|Connection (error|timeout)|Failed to connect|coordinator is (loading|not available)|not the (correct )?coordinator|no leader|leader is not available|rebalanc|Restarting the consumer|retry/i;

/** A kafkajs `logCreator` writing into `log` (namespace `kafka`), transient retries at debug. */
export function kafkaLogCreator(log: Logger): () => (entry: LogEntry) => void {
  const child = log.child({ component: 'kafkajs' });
  return () =>
    ({ namespace, level, log: content }) => {
      const {
        message,
        timestamp: _t,
        logger: _l,
        ...extra
      } = content as {
        message: string;
        timestamp?: string;
        logger?: string;
        [k: string]: unknown;
      };
      const fields = { namespace, ...extra };
      const transient =
        'retryCount' in extra ||
        'retryTime' in extra ||
        TRANSIENT.test(message) ||
        TRANSIENT.test(String(extra.error ?? ''));
      const { logLevel } = kafkajsModule();
      if (level <= logLevel.WARN && transient) child.debug(fields, message);
      else if (level === logLevel.ERROR) child.error(fields, message);
      else if (level === logLevel.WARN) child.warn(fields, message);
      else if (level === logLevel.INFO) child.info(fields, message);
      else child.debug(fields, message);
    };
}

/**
 * The `--queue` value: `redis://[USER:PASSWORD@]HOST[:PORT][/DB]` (or `rediss://` for TLS), and
 * the `--queue-name` value. Both come from a user or a script and are checked before any
 * connection: scheme, host, port 1–65535, database 0–15 (Redis' default number of databases),
 * nothing else (no query, no fragment), at most 1024 characters. Messages never repeat the password.
 */
import { QueueError } from './errors.ts';

export interface RedisTarget {
  readonly host: string;
  readonly port: number;
  readonly db: number;
  readonly username?: string;
  readonly password?: string;
  readonly tls: boolean;
  /** the URL as shown in messages (password replaced by ***) */
  readonly display: string;
}

const MAX_URL = 1024;
const EXPECTED = 'expected redis://HOST:PORT or redis://HOST:PORT/DB (rediss:// for TLS; USER:PASSWORD@ before HOST if the server wants them)';

/** Parses and checks a `--queue` URL; throws a QueueError naming the option and what was expected. */
export function parseRedisUrl(text: string, option = '--queue'): RedisTarget {
  const shown = (s: string) => JSON.stringify(s.length > 80 ? `${s.slice(0, 80)}…` : s);
  if (text.length > MAX_URL) throw new QueueError(`${option}: the URL is ${text.length} characters long; ${EXPECTED}, at most ${MAX_URL} characters`);
  let u: URL;
  try {
    u = new URL(text);
  } catch {
    throw new QueueError(`${option}: ${shown(text)} is not a URL; ${EXPECTED}`);
  }
  const masked = () => {
    const m = new URL(u.href);
    if (m.password !== '') m.password = '***';
    return m.href.replace(/\/$/, '');
  };
  if (u.protocol !== 'redis:' && u.protocol !== 'rediss:') throw new QueueError(`${option}: scheme ${JSON.stringify(u.protocol.replace(/:$/, ''))} in ${masked()}; ${EXPECTED}`);
  if (u.hostname === '') throw new QueueError(`${option}: no host in ${masked()}; ${EXPECTED}`);
  if (u.search !== '' || u.hash !== '') throw new QueueError(`${option}: ${masked()} has a query or fragment; ${EXPECTED}`);
  const port = u.port === '' ? 6379 : Number(u.port);
  if (!Number.isInteger(port) || port < 1 || port > 65535) throw new QueueError(`${option}: port ${u.port} in ${masked()}; expected 1 to 65535`);
  let db = 0;
  const path = u.pathname.replace(/^\//, '');
  if (path !== '') {
    if (!/^\d{1,2}$/.test(path) || Number(path) > 15) throw new QueueError(`${option}: database ${JSON.stringify(path)} in ${masked()}; expected a number from 0 to 15 after the port`);
    db = Number(path);
  }
  const host = u.hostname.replace(/^\[(.*)\]$/, '$1');
  return {
    host,
    port,
    db,
    username: u.username === '' ? undefined : decodeURIComponent(u.username),
    password: u.password === '' ? undefined : decodeURIComponent(u.password),
    tls: u.protocol === 'rediss:',
    display: masked(),
  };
}

/** `--queue-name`: letters, digits, `_`, `-` and `.`, 1 to 64 characters (it becomes part of Redis key names). */
export function checkQueueName(name: string, option = '--queue-name'): string {
  if (!/^[A-Za-z0-9_.-]{1,64}$/.test(name)) {
    throw new QueueError(`${option}: ${JSON.stringify(name.length > 80 ? `${name.slice(0, 80)}…` : name)}; expected 1 to 64 letters, digits, "_", "-" or "."`);
  }
  return name;
}

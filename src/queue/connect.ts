/**
 * Connecting to Redis: one checked connection first (reachable within 5 s, Redis 5.0 or later),
 * then the options the queue library's own connections use. Every connection gives up after about
 * 30 s of failed reconnection attempts instead of retrying for ever, so a Redis that goes away ends
 * the command with a message rather than a hang.
 */
import type { ConnectionOptions } from 'bullmq';
import { Redis } from 'ioredis';
import { queueErrors } from './errors.ts';
import type { RedisTarget } from './url.ts';

/** Reconnection: 200 ms, 400 ms, … up to 2 s between attempts; stop after 20 attempts (~30 s). */
const retryStrategy = (times: number): number | null => (times > 20 ? null : Math.min(times * 200, 2000));

/** ioredis options for a target (maxRetriesPerRequest null: the queue library's blocking commands need it). */
export function redisOptions(t: RedisTarget): ConnectionOptions & { host: string; port: number } {
  return {
    host: t.host,
    port: t.port,
    db: t.db,
    username: t.username,
    password: t.password,
    tls: t.tls ? {} : undefined,
    connectTimeout: 5000,
    maxRetriesPerRequest: null,
    retryStrategy,
  };
}

/** A checked connection and how to close it (closing is not reported as a loss). */
export interface Checked {
  readonly client: Redis;
  close(): Promise<void>;
}

/**
 * Opens the checked connection. Throws a QueueError naming the URL (password hidden) when Redis
 * cannot be reached, refuses the password, or is older than 5.0. `onLost` is called once if the
 * connection is later lost for good.
 */
export async function openRedis(t: RedisTarget, onLost: (why: string) => void): Promise<Checked> {
  let lastError = '';
  const o = redisOptions(t);
  const client = new Redis({ host: o.host, port: o.port, db: t.db, username: t.username, password: t.password, tls: t.tls ? {} : undefined, connectTimeout: 5000, lazyConnect: true, maxRetriesPerRequest: 1, retryStrategy: () => null });
  client.on('error', (e: Error) => (lastError = e.message));
  try {
    await client.connect();
    const info = await client.info('server');
    const version = /redis_version:([0-9.]+)/.exec(info)?.[1] ?? '?';
    if (Number(version.split('.')[0]) < 5) throw queueErrors.oldRedis(t.display, version);
  } catch (e) {
    client.disconnect();
    if (e instanceof Error && e.name === 'QueueError') throw e;
    throw queueErrors.unreachable(t.display, lastError || (e as Error).message);
  }
  // from here on, reconnect as the library's connections do, and report when that fails for good
  client.options.retryStrategy = retryStrategy;
  client.options.maxRetriesPerRequest = null;
  let closing = false;
  client.on('end', () => {
    if (!closing) onLost(lastError || 'the server closed the connection');
  });
  return {
    client,
    async close() {
      closing = true;
      try {
        await client.quit();
      } catch {
        client.disconnect();
      }
    },
  };
}

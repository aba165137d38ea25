import { type ChildProcess, spawn, spawnSync } from 'node:child_process';
import { existsSync, mkdtempSync, rmSync } from 'node:fs';
import { createServer } from 'node:net';
import { tmpdir } from 'node:os';
import { join } from 'node:path';

/** A Redis for integration tests and how to let it go. */
export interface TestRedis {
  url: string;
  /** Where it came from, for the test log. */
  kind: 'env' | 'container' | 'binary' | 'default';
  stop(): Promise<void>;
}

/** A free TCP port on 127.0.0.1. */
export function freePort(): Promise<number> {
  return new Promise((resolve, reject) => {
    const s = createServer();
    s.once('error', reject);
    s.listen(0, '127.0.0.1', () => {
      const addr = s.address();
      const port = typeof addr === 'object' && addr ? addr.port : 0;
      s.close(() => resolve(port));
    });
  });
}

function dockerReachable(): boolean {
  if (process.env.DOCKER_HOST) return true;
  return (
    existsSync('/var/run/docker.sock') || existsSync(join(process.env.HOME ?? '', '.docker/run/docker.sock'))
  );
}

function hasBinary(name: string): boolean {
  return spawnSync('sh', ['-c', `command -v ${name}`], { stdio: 'ignore' }).status === 0;
}

async function waitForPort(port: number, ms: number): Promise<void> {
  const { Socket } = await import('node:net');
  const until = Date.now() + ms;
  for (;;) {
    const ok = await new Promise<boolean>((resolve) => {
      const s = new Socket();
      s.once('connect', () => {
        s.destroy();
        resolve(true);
      });
      s.once('error', () => resolve(false));
      s.connect(port, '127.0.0.1');
    });
    if (ok) return;
    if (Date.now() > until) throw new Error(`redis-server did not open port ${port}`);
    await new Promise((r) => setTimeout(r, 50));
  }
}

/**
 * A real Redis for the tests (never a mock): `REDIS_URL` if set; else a testcontainers Redis when a Docker
 * engine is reachable; else a `redis-server` binary on a free port with a temporary directory (no
 * persistence, `noeviction`); else the default 127.0.0.1:6379.
 */
export async function startTestRedis(): Promise<TestRedis> {
  if (process.env.REDIS_URL) return { url: process.env.REDIS_URL, kind: 'env', stop: async () => {} };
  if (dockerReachable()) {
    try {
      const { GenericContainer, Wait } = await import('testcontainers');
      const c = await new GenericContainer('redis:7-alpine')
        .withCommand(['redis-server', '--maxmemory-policy', 'noeviction', '--save', '', '--appendonly', 'no'])
        .withExposedPorts(6379)
        .withWaitStrategy(Wait.forLogMessage('Ready to accept connections'))
        .start();
      return {
        url: `redis://${c.getHost()}:${c.getMappedPort(6379)}`,
        kind: 'container',
        stop: async () => {
          await c.stop();
        },
      };
    } catch {
      // No usable engine after all: fall through to a local binary.
    }
  }
  if (hasBinary('redis-server')) {
    const port = await freePort();
    const dir = mkdtempSync(join(tmpdir(), 'peel-redis-'));
    const child: ChildProcess = spawn(
      'redis-server',
      [
        '--port',
        String(port),
        '--bind',
        '127.0.0.1',
        '--dir',
        dir,
        '--save',
        '',
        '--appendonly',
        'no',
        '--maxmemory-policy',
        'noeviction',
      ],
      { stdio: 'ignore' },
    );
    await waitForPort(port, 10_000);
    return {
      url: `redis://127.0.0.1:${port}`,
      kind: 'binary',
      stop: async () => {
        await new Promise<void>((resolve) => {
          if (child.exitCode !== null) return resolve();
          child.once('exit', () => resolve());
          child.kill('SIGTERM');
        });
        rmSync(dir, { recursive: true, force: true });
      },
    };
  }
  return { url: 'redis://127.0.0.1:6379', kind: 'default', stop: async () => {} };
}

/** A key prefix unique to one test file (hash-tagged, like production's). */
export function testPrefix(name: string): string {
  return `{peel-test-${name}-${process.pid}-${Math.random().toString(36).slice(2, 8)}}`;
}

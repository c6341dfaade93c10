/**
 * A private redis-server for the queue tests: Debian's program (test/setup/system-tools.ts
 * installs it when missing), on a free loopback port, with its files (append-only log) in a temp
 * folder; stopped, killed or restarted on the same port by the test.
 */
import { spawn, type ChildProcess } from 'node:child_process';
import fs from 'node:fs';
import net from 'node:net';
import os from 'node:os';
import path from 'node:path';
import { ensureTool, REDIS } from '../setup/system-tools.ts';

export interface RedisServerOptions {
  password?: string;
  /** Extra redis-server arguments (e.g. TLS). `port` below replaces --port. */
  extra?: string[];
  /** Serve TLS on the port instead of plain TCP (cert, key and CA file paths). */
  tls?: { cert: string; key: string; ca: string };
}

export interface RedisServer {
  readonly port: number;
  readonly dir: string;
  /** redis://[:password@]127.0.0.1:port/0 (rediss:// with TLS). */
  readonly url: string;
  /** The running server's process id (undefined while stopped). */
  readonly pid: number | undefined;
  /** SIGKILL (no shutdown save), then wait until it is gone. */
  kill(): Promise<void>;
  /** Start again on the same port and folder (the append-only file is read back). */
  start(): Promise<void>;
  /** Stop and remove the folder. */
  stop(): Promise<void>;
}

export async function freePort(): Promise<number> {
  return new Promise((resolve, reject) => {
    const s = net.createServer();
    s.once('error', reject);
    s.listen(0, '127.0.0.1', () => {
      const port = (s.address() as net.AddressInfo).port;
      s.close(() => resolve(port));
    });
  });
}

export async function startRedis(o: RedisServerOptions = {}): Promise<RedisServer> {
  const exe = ensureTool(REDIS);
  const dir = fs.mkdtempSync(path.join(os.tmpdir(), 'reelwright-redis-'));
  const port = await freePort();
  let child: ChildProcess | undefined;
  const args = [
    '--bind', '127.0.0.1', '--dir', dir, '--appendonly', 'yes', '--save', '', '--daemonize', 'no', '--logfile', path.join(dir, 'redis.log'),
    '--maxmemory-policy', 'noeviction',
    ...(o.tls ? ['--port', '0', '--tls-port', String(port), '--tls-cert-file', o.tls.cert, '--tls-key-file', o.tls.key, '--tls-ca-cert-file', o.tls.ca, '--tls-auth-clients', 'no'] : ['--port', String(port)]),
    ...(o.password ? ['--requirepass', o.password] : []),
    ...(o.extra ?? []),
  ];
  const start = async () => {
    child = spawn(exe, args, { stdio: 'ignore' });
    const deadline = Date.now() + 20_000;
    // Ready when the port accepts connections.
    for (;;) {
      if (child.exitCode !== null) throw new Error(`redis-server exited (${child.exitCode}); see ${path.join(dir, 'redis.log')}`);
      const ok = await new Promise<boolean>((r) => {
        const c = net.connect(port, '127.0.0.1', () => {
          c.destroy();
          r(true);
        });
        c.on('error', () => r(false));
      });
      if (ok && fs.existsSync(path.join(dir, 'redis.log')) && /Ready to accept connections/.test(fs.readFileSync(path.join(dir, 'redis.log'), 'utf8').split('Server initialized').pop() ?? '')) return;
      if (Date.now() > deadline) throw new Error(`redis-server did not start on port ${port}`);
      await new Promise((r) => setTimeout(r, 50));
    }
  };
  const kill = async () => {
    const c = child;
    if (!c || c.exitCode !== null) return;
    await new Promise<void>((r) => {
      c.once('exit', () => r());
      c.kill('SIGKILL');
    });
  };
  await start();
  const auth = o.password ? `:${encodeURIComponent(o.password)}@` : '';
  return {
    port,
    dir,
    url: `${o.tls ? 'rediss' : 'redis'}://${auth}127.0.0.1:${port}/0`,
    get pid() {
      return child && child.exitCode === null ? child.pid : undefined;
    },
    kill,
    start,
    async stop() {
      await kill();
      fs.rmSync(dir, { recursive: true, force: true });
    },
  };
}

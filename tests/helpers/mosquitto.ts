// Starts Debian's mosquitto on a free loopback port with a password file and the ACL a lab would
// use (deploy/mosquitto/fringewise.acl), for the external-broker tests.
import { execFileSync, spawn, type ChildProcess } from 'node:child_process';
import { chmodSync, copyFileSync, mkdtempSync, rmSync, writeFileSync } from 'node:fs';
import net from 'node:net';
import os from 'node:os';
import path from 'node:path';
import { freePort } from '../../src/lib/server/db/cluster.ts';

export interface Mosquitto {
  port: number;
  close(): Promise<void>;
}

async function waitForPort(port: number, timeoutMs = 10_000): Promise<void> {
  const end = Date.now() + timeoutMs;
  while (Date.now() < end) {
    const ok = await new Promise<boolean>((resolve) => {
      const s = net.connect(port, '127.0.0.1', () => (s.end(), resolve(true)));
      s.on('error', () => resolve(false));
    });
    if (ok) return;
    await new Promise((r) => setTimeout(r, 50));
  }
  throw new Error(`mosquitto did not listen on ${port}`);
}

/** `users`: username → password (gateway id → token, and the server's account). */
export async function startMosquitto(users: Record<string, string>): Promise<Mosquitto> {
  const dir = mkdtempSync(path.join(os.tmpdir(), 'fringewise-mosquitto-'));
  chmodSync(dir, 0o755);
  const passwd = path.join(dir, 'passwd');
  writeFileSync(passwd, '');
  for (const [user, password] of Object.entries(users)) execFileSync('mosquitto_passwd', ['-b', passwd, user, password]);
  const acl = path.join(dir, 'fringewise.acl');
  copyFileSync(path.resolve('deploy/mosquitto/fringewise.acl'), acl);
  for (const f of [passwd, acl]) chmodSync(f, 0o644);
  const port = await freePort();
  const conf = path.join(dir, 'mosquitto.conf');
  writeFileSync(
    conf,
    [`listener ${port} 127.0.0.1`, 'allow_anonymous false', `password_file ${passwd}`, `acl_file ${acl}`, 'persistence false', 'user root', 'log_dest stderr'].join('\n') + '\n',
  );
  const proc: ChildProcess = spawn('/usr/sbin/mosquitto', ['-c', conf], { stdio: ['ignore', 'ignore', 'pipe'] });
  let log = '';
  proc.stderr?.on('data', (d: Buffer) => (log += d.toString()));
  try {
    await waitForPort(port);
  } catch (err) {
    proc.kill('SIGKILL');
    throw new Error(`${(err as Error).message}\n${log}`);
  }
  return {
    port,
    close: async () => {
      const exited = new Promise((r) => proc.once('exit', r));
      proc.kill('SIGTERM');
      await exited;
      rmSync(dir, { recursive: true, force: true });
    },
  };
}

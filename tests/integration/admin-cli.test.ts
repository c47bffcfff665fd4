// The contract's admin CLI, run as a child process the way an admin runs it: each command works,
// a token is printed alone on the last line, and adding what exists exits 1 with a clear message.
import { execFile, spawn } from 'node:child_process';
import path from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { userForApiToken } from '../../src/lib/server/auth/api-tokens.ts';
import { verifyPassword } from '../../src/lib/server/auth/password.ts';
import { verifyGatewayToken } from '../../src/lib/server/provisioning.ts';
import { findUserByEmail } from '../../src/lib/server/users.ts';
import { firstAdminHint } from '../../src/server/first-admin.ts';
import { useFreshDatabase, type FreshDatabase } from '../helpers/fresh-db.ts';

let db: FreshDatabase;
beforeAll(async () => {
  db = await useFreshDatabase('cli');
});
afterAll(async () => {
  await db?.restore();
});

interface Run {
  code: number;
  stdout: string;
  stderr: string;
}

function admin(args: string[], env: Record<string, string> = {}): Promise<Run> {
  return new Promise((resolve) => {
    execFile(
      path.resolve('node_modules/.bin/tsx'),
      ['src/server/admin-cli.ts', ...args],
      { env: { ...process.env, DATABASE_URL: db.url, ...env }, timeout: 60_000 },
      (err, stdout, stderr) => resolve({ code: err ? (typeof err.code === 'number' ? err.code : 1) : 0, stdout, stderr }),
    );
  });
}

const lastLine = (s: string) => s.trim().split('\n').at(-1)!.trim();

/**
 * The CLI on a terminal (util-linux's `script` gives it one), typing `password` once it asks:
 * everything the terminal showed, and the exit code.
 */
function adminOnTerminal(args: string[], password: string): Promise<Run> {
  return new Promise((resolve) => {
    const command = [path.resolve('node_modules/.bin/tsx'), 'src/server/admin-cli.ts', ...args].join(' ');
    const child = spawn('script', ['-qfec', command, '/dev/null'], { env: { ...process.env, DATABASE_URL: db.url, FRINGEWISE_PASSWORD: '' } });
    let shown = '';
    child.stdout.on('data', (d: Buffer) => {
      const before = shown;
      shown += String(d);
      if (!before.includes('Password: ') && shown.includes('Password: ')) child.stdin.write(`${password}\r`);
    });
    const timer = setTimeout(() => child.kill(), 60_000);
    child.on('close', (code) => {
      clearTimeout(timer);
      resolve({ code: code ?? 1, stdout: shown, stderr: '' });
    });
  });
}

describe('npm run admin', () => {
  it('user add creates an account; the same e-mail again exits 1', async () => {
    const ok = await admin(['user', 'add', 'Cli.Person@Lab.Example', '--role', 'operator'], { FRINGEWISE_PASSWORD: 'cli-password-123' });
    expect(ok.code, ok.stderr).toBe(0);
    expect(ok.stdout).toContain('cli.person@lab.example added as operator');
    const dup = await admin(['user', 'add', 'cli.person@lab.example', '--role', 'observer'], { FRINGEWISE_PASSWORD: 'cli-password-123' });
    expect(dup.code).toBe(1);
    expect(dup.stderr).toContain('already exists');
    expect(dup.stderr).not.toMatch(/at .*\.ts:\d+/);
  });

  it('user add prompts for the password on a terminal without showing what is typed', async () => {
    const res = await adminOnTerminal(['user', 'add', 'prompted@lab.example', '--role', 'observer'], 'typed-secret-789');
    expect(res.code, res.stdout).toBe(0);
    expect(res.stdout).toContain('Password: ');
    expect(res.stdout).toContain('prompted@lab.example added as observer');
    expect(res.stdout).not.toContain('typed-secret-789');
    const user = await findUserByEmail('prompted@lab.example');
    expect(await verifyPassword(user!.passwordHash!, 'typed-secret-789')).toBe(true);
  });

  it('refuses a bad role, a short password and a missing password with exit 1', async () => {
    const role = await admin(['user', 'add', 'x@lab.example', '--role', 'boss'], { FRINGEWISE_PASSWORD: 'cli-password-123' });
    expect(role.code).toBe(1);
    expect(role.stderr).toContain('--role must be');
    const short = await admin(['user', 'add', 'y@lab.example', '--role', 'observer'], { FRINGEWISE_PASSWORD: 'short' });
    expect(short.code).toBe(1);
    expect(short.stderr).toContain('at least');
    const none = await admin(['user', 'add', 'z@lab.example', '--role', 'observer'], { FRINGEWISE_PASSWORD: '' });
    expect(none.code).toBe(1);
    expect(none.stderr).toContain('FRINGEWISE_PASSWORD');
  });

  it('token add prints a working personal token alone on the last line', async () => {
    const res = await admin(['token', 'add', 'cli.person@lab.example']);
    expect(res.code, res.stderr).toBe(0);
    const token = lastLine(res.stdout);
    expect(token).toMatch(/^fwp_[A-Za-z0-9_-]+$/);
    expect(await userForApiToken(token)).toMatchObject({ email: 'cli.person@lab.example', role: 'operator' });
    const unknown = await admin(['token', 'add', 'nobody@lab.example']);
    expect(unknown.code).toBe(1);
    expect(unknown.stderr).toContain('no user');
  });

  it('bench add creates a bench; the same id again exits 1', async () => {
    const ok = await admin(['bench', 'add', 'cli-bench', '--name', 'CLI bench', '--wavelength-nm', '1550']);
    expect(ok.code, ok.stderr).toBe(0);
    expect(ok.stdout).toContain('bench cli-bench "CLI bench" added (1550 nm)');
    const dup = await admin(['bench', 'add', 'cli-bench', '--name', 'Again', '--wavelength-nm', '1550']);
    expect(dup.code).toBe(1);
    expect(dup.stderr).toContain('bench cli-bench already exists');
    const badId = await admin(['bench', 'add', 'Bad_Id', '--name', 'x', '--wavelength-nm', '800']);
    expect(badId.code).toBe(1);
  });

  it('gateway add prints its MQTT password alone on the last line; the same id again exits 1', async () => {
    const ok = await admin(['gateway', 'add', 'cli-gw', '--bench', 'cli-bench']);
    expect(ok.code, ok.stderr).toBe(0);
    const token = lastLine(ok.stdout);
    expect(token).toMatch(/^fwg_[A-Za-z0-9_-]+$/);
    expect(await verifyGatewayToken('cli-gw', token)).toEqual({ benchId: 'cli-bench' });
    const dup = await admin(['gateway', 'add', 'cli-gw', '--bench', 'cli-bench']);
    expect(dup.code).toBe(1);
    expect(dup.stderr).toContain('gateway cli-gw already exists');
    const noBench = await admin(['gateway', 'add', 'cli-gw2', '--bench', 'no-such-bench']);
    expect(noBench.code).toBe(1);
    expect(noBench.stderr).toContain('does not exist');
  });

  it('says which option is not a number: a wavelength with a decimal comma or in words', async () => {
    for (const nm of ['1,064', 'abc']) {
      const res = await admin(['bench', 'add', 'cli-nm', '--name', 'x', '--wavelength-nm', nm]);
      expect(res.code, nm).toBe(1);
      expect(res.stderr, nm).toContain('--wavelength-nm must be a number of nanometres');
    }
  });

  it('answers --help with the usage and exit 0, without reaching a database', async () => {
    const res = await admin(['--help'], { DATABASE_URL: 'postgres://nobody@127.0.0.1:1/none' });
    expect(res.code, res.stderr).toBe(0);
    expect(res.stdout).toContain('npm run admin -- bench add');
  });

  it("tells npm start's reader how to make the first admin, until one exists", async () => {
    // This database holds only the operator added above.
    expect(await firstAdminHint()).toContain('npm run admin -- user add you@your-lab.example --role admin');
    const ok = await admin(['user', 'add', 'first.admin@lab.example', '--role', 'admin'], { FRINGEWISE_PASSWORD: 'cli-password-123' });
    expect(ok.code, ok.stderr).toBe(0);
    expect(await firstAdminHint()).toBeNull();
  });

  it('prints usage for an unknown command with exit 1', async () => {
    const res = await admin(['frobnicate']);
    expect(res.code).toBe(1);
    expect(res.stderr).toContain('usage');
  });
});

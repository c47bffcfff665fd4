// `npm run admin -- …`: the contract's operations CLI. A command that prints a token prints it
// alone on its last line; adding what exists exits 1 with a clear message.
import { parseArgs } from 'node:util';
import { ZodError } from 'zod';
import { readFormNumber } from '../lib/form-number.ts';
import { createApiToken } from '../lib/server/auth/api-tokens.ts';
import { closeDb } from '../lib/server/db/index.ts';
import { migrateDatabase } from '../lib/server/db/migrate.ts';
import { createBench, createGateway, NotFoundError } from '../lib/server/provisioning.ts';
import { createUser, DuplicateError, findUserByEmail, roleSchema } from '../lib/server/users.ts';
import { connectDatabase } from './database.ts';

const USAGE = `usage:
  npm run admin -- user add <email> --role admin|operator|observer [--name "…"]   (password from FRINGEWISE_PASSWORD or prompt)
  npm run admin -- token add <email> [--label "…"]
  npm run admin -- bench add <bench-id> --name <name> --wavelength-nm <nm> [--description "…"]
  npm run admin -- gateway add <gw> --bench <bench-id>`;

class UsageError extends Error {}

async function readPassword(): Promise<string> {
  const fromEnv = process.env['FRINGEWISE_PASSWORD'];
  if (fromEnv) return fromEnv;
  if (!process.stdin.isTTY) throw new UsageError('set FRINGEWISE_PASSWORD (no terminal to prompt on)');
  return await promptHidden('Password: ');
}

/**
 * A line typed on the terminal, not echoed: a password shown as it is typed stays on the screen
 * and in the terminal's scrollback. Raw mode turns the terminal's own echo off too.
 */
async function promptHidden(question: string): Promise<string> {
  const stdin = process.stdin;
  // Echo off before the question shows, so nothing typed in answer can be echoed.
  stdin.setRawMode(true);
  process.stderr.write(question);
  stdin.setEncoding('utf8');
  stdin.resume();
  let typed: string[] = [];
  try {
    return await new Promise<string>((resolve, reject) => {
      stdin.on('data', (chunk: string) => {
        for (const ch of chunk) {
          if (ch === '\r' || ch === '\n') return resolve(typed.join(''));
          // Ctrl-C, Ctrl-D: raw mode delivers them as characters.
          if (ch === '\u0003' || ch === '\u0004') return reject(new UsageError('no password given'));
          if (ch === '\u007f' || ch === '\b') typed = typed.slice(0, -1);
          else if (ch >= ' ') typed.push(ch);
        }
      });
    });
  } finally {
    stdin.setRawMode(false);
    stdin.pause();
    process.stderr.write('\n');
  }
}

function parseCommand(argv: string[]) {
  return parseArgs({
    args: argv,
    allowPositionals: true,
    options: {
      role: { type: 'string' },
      name: { type: 'string' },
      label: { type: 'string' },
      'wavelength-nm': { type: 'string' },
      description: { type: 'string' },
      bench: { type: 'string' },
      help: { type: 'boolean', short: 'h' },
    },
  });
}

async function run({ positionals, values }: ReturnType<typeof parseCommand>): Promise<void> {
  const [noun, verb, subject] = positionals;
  if (verb !== 'add' || !subject) throw new UsageError(USAGE);
  switch (noun) {
    case 'user': {
      const role = roleSchema.safeParse(values.role);
      if (!role.success) throw new UsageError('--role must be admin, operator or observer');
      const user = await createUser({ email: subject, role: role.data, name: values.name ?? '', password: await readPassword() });
      console.log(`user ${user.email} added as ${user.role}`);
      return;
    }
    case 'token': {
      const user = await findUserByEmail(subject);
      if (!user) throw new NotFoundError(`no user with e-mail ${subject}`);
      const { token } = await createApiToken(user.id, values.label ?? 'cli');
      console.log(`personal API token for ${user.email} (${user.role}); shown once:`);
      console.log(token);
      return;
    }
    case 'bench': {
      if (!values.name || !values['wavelength-nm']) throw new UsageError('bench add needs --name and --wavelength-nm');
      const wavelengthNm = readFormNumber(values['wavelength-nm']);
      if (typeof wavelengthNm !== 'number' || Number.isNaN(wavelengthNm)) throw new UsageError('--wavelength-nm must be a number of nanometres with a decimal point, such as 1064 or 780.24');
      const bench = await createBench({ id: subject, name: values.name, wavelengthNm, description: values.description ?? '' });
      console.log(`bench ${bench.id} "${bench.name}" added (${bench.wavelengthNm} nm)`);
      return;
    }
    case 'gateway': {
      if (!values.bench) throw new UsageError('gateway add needs --bench <bench-id>');
      const { token } = await createGateway(subject, values.bench);
      console.log(`gateway ${subject} added to bench ${values.bench}; its MQTT password, shown once:`);
      console.log(token);
      return;
    }
    default:
      throw new UsageError(USAGE);
  }
}

// The arguments are read before the database is reached: --help or a typo must not start a cluster.
let command: ReturnType<typeof parseCommand>;
try {
  command = parseCommand(process.argv.slice(2));
} catch (err) {
  console.error(`error: ${err instanceof Error ? err.message : err}\n${USAGE}`);
  process.exit(1);
}
if (command.values.help) {
  console.log(USAGE);
  process.exit(0);
}

const cluster = await connectDatabase();
let code = 0;
try {
  await migrateDatabase();
  await run(command);
} catch (err) {
  code = 1;
  if (err instanceof ZodError) console.error(`error: ${err.issues.map((i) => i.message).join('; ')}`);
  else if (err instanceof DuplicateError || err instanceof NotFoundError || err instanceof UsageError) console.error(`error: ${err.message}`);
  else console.error('error:', err instanceof Error ? err.message : err);
} finally {
  await closeDb();
  if (cluster?.startedHere) cluster.stop();
}
process.exit(code);

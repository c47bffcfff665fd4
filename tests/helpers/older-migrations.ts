// The committed migrations as an older install has them: a copy of drizzle/ whose journal stops
// before migration `idx`, for tests that migrate a database up to there, fill it, then migrate on.
import { cp, mkdtemp, readFile, rm, writeFile } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import path from 'node:path';

export interface OlderMigrations {
  dir: string;
  remove(): Promise<void>;
}

export async function migrationsBefore(idx: number): Promise<OlderMigrations> {
  const dir = await mkdtemp(path.join(tmpdir(), 'fw-migrations-'));
  await cp(path.resolve('drizzle'), dir, { recursive: true });
  const journalPath = path.join(dir, 'meta', '_journal.json');
  const journal = JSON.parse(await readFile(journalPath, 'utf8')) as { entries: { idx: number }[] };
  journal.entries = journal.entries.filter((e) => e.idx < idx);
  await writeFile(journalPath, JSON.stringify(journal));
  return { dir, remove: () => rm(dir, { recursive: true, force: true }) };
}

// A lab that starts without the demo (FRINGEWISE_SEED=0) has no account to sign in with: `npm
// start` says how to make the first admin rather than leave a sign-in page nobody can pass.
import { countAdmins } from '../lib/server/users.ts';

/** What to print under the address while no active admin exists; null once one does. */
export async function firstAdminHint(): Promise<string | null> {
  if ((await countAdmins()) > 0) return null;
  return [
    'No admin account yet. Create the lab\'s first one from another terminal in this folder:',
    "  FRINGEWISE_PASSWORD='…' npm run admin -- user add you@your-lab.example --role admin",
    'then sign in with it and invite the others under People.',
  ].join('\n');
}

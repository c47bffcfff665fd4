// The id of a stored record (runs, alarm rules and events, notes: bigint identity columns), as it
// arrives in a path, a query string or a form. Bounded so a huge number is a 422, not a database error.
import { z } from 'zod';

export const recordIdSchema = z.coerce.number().int().positive().max(Number.MAX_SAFE_INTEGER);

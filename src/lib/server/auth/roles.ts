import type { Role } from './lucia.ts';

export type { Role };
export const ROLES: readonly Role[] = ['observer', 'operator', 'admin'];

/** Roles are ordered: an admin may do what an operator may, an operator what an observer may. */
export function hasRole(actual: Role, needed: Role): boolean {
  return ROLES.indexOf(actual) >= ROLES.indexOf(needed);
}

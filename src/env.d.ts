/// <reference types="astro/client" />

declare namespace App {
  interface Locals {
    user: import('./lib/server/auth/lucia.ts').SessionUser | null;
    /** The auth session id (not Astro's own session feature). */
    authSessionId: string | null;
    authMethod: 'session' | 'token' | null;
  }
}

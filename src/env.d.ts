/// <reference path="../.astro/types.d.ts" />

declare namespace App {
  interface Locals {
    /** The signed-in user with roles, or null. */
    user: import('./lib/server/auth/roles').SessionUser | null;
    /** The lucia session behind the cookie, or null. */
    session: import('lucia').Session | null;
  }
}

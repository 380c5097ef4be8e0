/** Roles, lowest first. `operator` exists in the users table; it reads like a viewer (no write action needs it yet). */
export const ROLES = ['viewer', 'operator', 'engineer', 'admin'] as const;
export type Role = (typeof ROLES)[number];

export function roleRank(role: Role): number {
  return ROLES.indexOf(role);
}

export function hasRole(have: Role, need: Role): boolean {
  return roleRank(have) >= roleRank(need);
}

export function isRole(value: string): value is Role {
  return (ROLES as readonly string[]).includes(value);
}

/** Who is calling. */
export interface Principal {
  readonly kind: 'user' | 'token' | 'anonymous';
  /** Username (tokens act for their user); 'anonymous' for anonymous access. */
  readonly username: string;
  readonly userId?: number;
  readonly role: Role;
  /** Token or session row id. */
  readonly credentialId?: number;
}

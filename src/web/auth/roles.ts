import { USER_ROLES, type UserRole } from '../../store/accountRepos.js';

/** Each role can do everything the roles before it can. */
const ROLE_RANK = { viewer: 0, operator: 1, admin: 2 } as const satisfies Record<UserRole, number>;

export function roleAllows(held: UserRole, needed: UserRole): boolean {
  return ROLE_RANK[held] >= ROLE_RANK[needed];
}

export function isUserRole(value: string): value is UserRole {
  return (USER_ROLES as readonly string[]).includes(value);
}

export { USER_ROLES, type UserRole };

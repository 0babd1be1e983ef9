/** Member roles, from least to most privileged. Shared by client and server. */
export const ROLES = ['technician', 'formulator', 'owner'] as const;
export type Role = (typeof ROLES)[number];

const RANK: Record<Role, number> = { technician: 0, formulator: 1, owner: 2 };

/** True when `role` has at least the privileges of `needed`. */
export function roleAtLeast(role: Role, needed: Role): boolean {
  return RANK[role] >= RANK[needed];
}

/** Who may open something that needs `minRole`, in words: "formulators and the lab's owner". */
export function openToText(minRole: Role): string {
  switch (minRole) {
    case 'owner':
      return "the lab's owner";
    case 'formulator':
      return "formulators and the lab's owner";
    case 'technician':
      return 'every member of the lab';
  }
}

export function isRole(x: unknown): x is Role {
  return typeof x === 'string' && (ROLES as readonly string[]).includes(x);
}

export const ROLE_LABELS: Record<Role, string> = {
  technician: 'Technician',
  formulator: 'Formulator',
  owner: 'Owner',
};

/** The main areas of the app and the least role that may open each. */
export const AREAS = [
  { name: 'bench', label: 'Bench', minRole: 'technician' },
  { name: 'studies', label: 'Studies', minRole: 'technician' },
  { name: 'formulas', label: 'Formulas', minRole: 'technician' },
  { name: 'storage', label: 'Storage', minRole: 'technician' },
  { name: 'reviews', label: 'Reviews', minRole: 'owner' },
  { name: 'lab', label: 'Lab', minRole: 'owner' },
] as const satisfies readonly { name: string; label: string; minRole: Role }[];

export type AreaName = (typeof AREAS)[number]['name'];

export function areasFor(role: Role) {
  return AREAS.filter((a) => roleAtLeast(role, a.minRole));
}

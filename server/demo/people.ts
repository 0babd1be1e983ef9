/** The invented demo labs' people. The password is printed at start and listed in the README. */
import type { Role } from '../../shared/roles';

export const DEMO_PASSWORD = 'keepwell-demo';

export interface DemoPerson {
  name: string;
  email: string;
  role: Role;
}

export const DEMO_LABS: { name: string; timeZone: string; people: DemoPerson[] }[] = [
  {
    name: 'Larkspur Skin Studio',
    timeZone: 'Europe/Berlin',
    people: [
      { name: 'Maya Lindqvist', email: 'owner@larkspur.example', role: 'owner' },
      { name: 'Theo Okafor', email: 'formulator@larkspur.example', role: 'formulator' },
      { name: 'Priya Nair', email: 'tech@larkspur.example', role: 'technician' },
    ],
  },
  {
    name: 'Copperbeech Naturals',
    timeZone: 'America/Chicago',
    people: [
      { name: 'Rosa Delgado', email: 'owner@copperbeech.example', role: 'owner' },
      { name: 'Sam Whitfield', email: 'tech@copperbeech.example', role: 'technician' },
    ],
  },
];

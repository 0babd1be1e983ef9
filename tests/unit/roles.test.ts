import { describe, expect, it } from 'vitest';
import { isRole, openToText, roleAtLeast } from '../../shared/roles';

describe('roles in words', () => {
  it('names who may open a page from its least role', () => {
    expect(openToText('owner')).toBe("the lab's owner");
    expect(openToText('formulator')).toBe("formulators and the lab's owner");
    expect(openToText('technician')).toBe('every member of the lab');
    expect(roleAtLeast('owner', 'formulator')).toBe(true);
    expect(roleAtLeast('technician', 'formulator')).toBe(false);
  });

  it('tells a role from anything else in a query', () => {
    expect(isRole('formulator')).toBe(true);
    expect(isRole('admin')).toBe(false);
    expect(isRole(['owner'])).toBe(false);
    expect(isRole(undefined)).toBe(false);
  });
});

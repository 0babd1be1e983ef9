import { defineStore } from 'pinia';
import { computed, ref } from 'vue';
import type { SessionUser, SignInInput } from '@shared/schemas/auth';
import { areasFor, roleAtLeast, type Role } from '@shared/roles';
import { api } from '@/api/client';

export const useSessionStore = defineStore('session', () => {
  const user = ref<SessionUser | null>(null);
  const loaded = ref(false);

  const areas = computed(() => (user.value ? areasFor(user.value.role) : []));
  const can = (minRole: Role) => !!user.value && roleAtLeast(user.value.role, minRole);

  /** Asks the server who is signed in (once per page load, or after sign-in/out). */
  async function load(force = false) {
    if (loaded.value && !force) return;
    user.value = (await api.get<{ user: SessionUser | null }>('/auth/session')).user;
    loaded.value = true;
  }

  async function signIn(input: SignInInput) {
    user.value = (await api.post<{ user: SessionUser }>('/auth/sign-in', input)).user;
    loaded.value = true;
  }

  async function signOut() {
    await api.post('/auth/sign-out');
    user.value = null;
  }

  function forget() {
    user.value = null;
  }

  return { user, loaded, areas, can, load, signIn, signOut, forget };
});

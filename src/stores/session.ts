import { defineStore } from 'pinia';
import { computed, ref } from 'vue';
import type { SessionUser, SignInInput } from '@shared/schemas/auth';
import { areasFor, roleAtLeast, type Role } from '@shared/roles';
import { api, ApiError } from '@/api/client';

/** The member last signed in on this device, so the Bench and Record open offline (issue 18). */
const KEPT = 'keepwell:session:v1';
function keep(u: SessionUser | null) {
  try {
    if (u) localStorage.setItem(KEPT, JSON.stringify(u));
    else localStorage.removeItem(KEPT);
  } catch {
    /* storage refused: offline opening is not possible */
  }
}
function kept(): SessionUser | null {
  try {
    return JSON.parse(localStorage.getItem(KEPT) ?? 'null') as SessionUser | null;
  } catch {
    return null;
  }
}

export const useSessionStore = defineStore('session', () => {
  const user = ref<SessionUser | null>(null);
  const loaded = ref(false);
  /** The server could not be reached: the member kept on this device is used. */
  const offline = ref(false);

  const areas = computed(() => (user.value ? areasFor(user.value.role) : []));
  const can = (minRole: Role) => !!user.value && roleAtLeast(user.value.role, minRole);

  /** Asks the server who is signed in (once per page load, or after sign-in/out). */
  async function load(force = false) {
    if (loaded.value && !force) return;
    try {
      user.value = (await api.get<{ user: SessionUser | null }>('/auth/session')).user;
      offline.value = false;
      keep(user.value);
    } catch (e) {
      if (!(e instanceof ApiError) || e.status !== 0) throw e;
      user.value = kept();
      offline.value = true;
    }
    loaded.value = true;
  }

  async function signIn(input: SignInInput) {
    user.value = (await api.post<{ user: SessionUser }>('/auth/sign-in', input)).user;
    keep(user.value);
    offline.value = false;
    loaded.value = true;
  }

  async function signOut() {
    await api.post('/auth/sign-out');
    user.value = null;
    keep(null);
  }

  function forget() {
    user.value = null;
  }

  return { user, loaded, offline, areas, can, load, signIn, signOut, forget };
});

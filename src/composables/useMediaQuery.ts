import { onBeforeUnmount, ref } from 'vue';

/** Whether a CSS media query matches, kept up to date while the component lives. */
export function useMediaQuery(query: string) {
  const mq = typeof window !== 'undefined' ? window.matchMedia(query) : null;
  const matches = ref(mq?.matches ?? false);
  const onChange = (e: MediaQueryListEvent) => (matches.value = e.matches);
  mq?.addEventListener('change', onChange);
  onBeforeUnmount(() => mq?.removeEventListener('change', onChange));
  return matches;
}

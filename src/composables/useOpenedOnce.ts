/**
 * True from the first time `open()` is true, and from then on: a dialog loaded on demand
 * (`defineAsyncComponent`) is mounted with `v-if` on this, so its chunk loads when first opened, not
 * with the page, and later closes still animate.
 */
import { readonly, ref, watch, type Ref } from 'vue';

export function useOpenedOnce(open: () => unknown): Readonly<Ref<boolean>> {
  const opened = ref(Boolean(open()));
  if (!opened.value) {
    const stop = watch(open, (v) => {
      if (!v) return;
      opened.value = true;
      stop();
    });
  }
  return readonly(opened);
}

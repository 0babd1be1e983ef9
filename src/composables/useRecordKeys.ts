/** The Record screen's keyboard: Enter in an input moves to the next one (then to Save); Ctrl/⌘+S saves. */
import { onBeforeUnmount, onMounted } from 'vue';

const FIELDS = '.attributes input:not([type="file"]):not(:disabled), .attributes textarea:not(:disabled), .attributes [role="radio"][tabindex="0"]:not(:disabled)';

export function useRecordKeys(save: () => void) {
  function onKeydown(e: KeyboardEvent) {
    if ((e.ctrlKey || e.metaKey) && e.key.toLowerCase() === 's') {
      e.preventDefault();
      save();
      return;
    }
    const t = e.target as HTMLElement;
    if (e.key === 'Enter' && t instanceof HTMLInputElement && t.closest('.attributes')) {
      e.preventDefault();
      const all = [...document.querySelectorAll<HTMLElement>(FIELDS)];
      (all[all.indexOf(t) + 1] ?? document.querySelector<HTMLElement>('[data-testid="save"]'))?.focus();
    }
  }
  onMounted(() => window.addEventListener('keydown', onKeydown));
  onBeforeUnmount(() => window.removeEventListener('keydown', onKeydown));
}

/** useOpenedOnce (src/composables/useOpenedOnce.ts): what mounts a dialog loaded on demand. */
import { nextTick, ref } from 'vue';
import { describe, expect, it } from 'vitest';
import { useOpenedOnce } from '../../src/composables/useOpenedOnce';

describe('useOpenedOnce', () => {
  it('is false until the first opening, then stays true through closing and reopening', async () => {
    const open = ref<object | null>(null);
    const opened = useOpenedOnce(() => open.value);
    expect(opened.value).toBe(false);
    open.value = { id: 1 };
    await nextTick();
    expect(opened.value).toBe(true);
    open.value = null;
    await nextTick();
    expect(opened.value).toBe(true);
  });

  it('is true at once when already open', () => {
    expect(useOpenedOnce(() => true).value).toBe(true);
  });
});

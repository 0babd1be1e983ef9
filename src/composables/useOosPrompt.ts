/**
 * Asking about out-of-specification results on the Record screen, one at a time: after a save (or a
 * correction) each failing result still unconfirmed is asked about; a card's own button asks about
 * one. What comes next ("Save and next sample") waits until the questions are answered or put off.
 */
import { computed, ref } from 'vue';

export function useOosPrompt() {
  /** studyAttributeIds still to ask about, first shown. */
  const queue = ref<number[]>([]);
  let then: (() => unknown) | null = null;

  const asking = computed(() => queue.value[0] ?? null);
  const remaining = computed(() => queue.value.length);

  function ask(ids: number[]) {
    queue.value = [...new Set([...queue.value, ...ids])];
  }

  /** Runs `next` once nothing is asked any more (at once when nothing is). */
  function afterwards(next: () => unknown) {
    if (!queue.value.length) return void next();
    then = next;
  }

  function finish() {
    const next = then;
    then = null;
    if (next) void next();
  }

  /** The shown one is answered: ask the next one, or go on. */
  function answered() {
    queue.value = queue.value.slice(1);
    if (!queue.value.length) finish();
  }

  /** "Decide later": the rest stay unconfirmed; go on. */
  function later() {
    queue.value = [];
    finish();
  }

  /** Closed without an answer: stay on this sample. */
  function dismiss() {
    queue.value = [];
    then = null;
  }

  return { asking, remaining, ask, afterwards, answered, later, dismiss };
}

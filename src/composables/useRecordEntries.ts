/**
 * What is typed on the Record screen, kept on this device until the server confirms it (useDraft),
 * with each attribute's method details defaulted to the last ones used (spindle, speed... stay the
 * same from sample to sample).
 */
import { computed, type Ref } from 'vue';
import type { RecordAttribute, RecordSheet } from '@shared/schemas/records';
import { emptyEntry, entryHasContent, methodForInputs, type EntryDraft } from '@/components/record/format';
import { draftKey, useDraft } from '@/composables/useDraft';
import { useSessionStore } from '@/stores/session';

export interface SheetDraft {
  entries: Record<string, EntryDraft>;
}

const METHOD_PREFIX = 'keepwell:method:v1:';

export function useRecordEntries(code: Ref<string>, checkpointId: Ref<number>) {
  const session = useSessionStore();
  const draft = useDraft<SheetDraft>({
    key: () => (session.user && code.value && checkpointId.value ? draftKey(session.user.lab.id, session.user.id, code.value, checkpointId.value) : null),
    empty: () => ({ entries: {} }),
    isEmpty: (d) => !Object.values(d.entries).some(entryHasContent),
  });
  const entries = computed(() => draft.data.value.entries);
  const methodKey = (studyAttributeId: number) => `${METHOD_PREFIX}${session.user?.lab.id ?? 0}:${studyAttributeId}`;

  /**
   * The method details of this sample's previous reading, else of its batch's initial test (the
   * baseline), else the last ones used for this attribute on this device.
   */
  function rememberedMethod(item: RecordAttribute): Record<string, string> {
    const fromServer = item.previous?.method ?? item.baseline?.method;
    if (fromServer && Object.keys(fromServer).length) return methodForInputs(fromServer);
    try {
      const raw = localStorage.getItem(methodKey(item.studyAttributeId));
      return raw ? (JSON.parse(raw) as Record<string, string>) : {};
    } catch {
      return {};
    }
  }

  function rememberMethod(studyAttributeId: number, method: Record<string, string | number> | undefined) {
    if (!method) return;
    try {
      localStorage.setItem(methodKey(studyAttributeId), JSON.stringify(methodForInputs(method)));
    } catch {
      /* storage full or refused: the default is only a convenience */
    }
  }

  /** Every attribute still to record gets an entry, with method details defaulted; recorded ones drop theirs. */
  function ensureEntries(s: RecordSheet) {
    const next = { ...draft.data.value.entries };
    for (const item of s.attributes) {
      const k = String(item.studyAttributeId);
      if (item.current) {
        delete next[k];
        continue;
      }
      const e = next[k] ?? emptyEntry();
      if (item.attribute.methodFields?.length && !Object.values(e.method).some((v) => v)) e.method = rememberedMethod(item);
      next[k] = e;
    }
    draft.data.value = { entries: next };
  }

  function setEntry(item: RecordAttribute, e: EntryDraft) {
    draft.data.value.entries[String(item.studyAttributeId)] = e;
  }

  const entryOf = (item: RecordAttribute): EntryDraft => entries.value[String(item.studyAttributeId)] ?? emptyEntry();

  return { draft, entries, entryOf, ensureEntries, setEntry, rememberMethod };
}

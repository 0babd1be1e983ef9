/**
 * What may be done on the Record screen: record (open window, or a formulator recording early),
 * add photos, correct (an owner only once the study is locked), act on an out-of-specification result.
 */
import { computed, ref, type Ref } from 'vue';
import type { RecordSheet } from '@shared/schemas/records';
import { useSessionStore } from '@/stores/session';

export function useRecordAccess(sheet: Ref<RecordSheet | null>) {
  const session = useSessionStore();
  /** A formulator chose to record before the window opens. */
  const recordEarly = ref(false);

  const opensLater = computed(() => !!sheet.value && !sheet.value.open && /opens on/.test(sheet.value.closedReason ?? ''));
  const mayRecordEarly = computed(() => opensLater.value && session.can('formulator') && !sheet.value?.locked);
  const recordingOpen = computed(() => !!sheet.value && !sheet.value.locked && (sheet.value.open || (mayRecordEarly.value && recordEarly.value)));
  const photosOpen = computed(() => !!sheet.value && !sheet.value.locked && (sheet.value.open || mayRecordEarly.value));
  const cancelled = computed(() => sheet.value?.sample.study.status === 'cancelled');
  const canCorrect = computed(() => !!sheet.value && !cancelled.value && (!sheet.value.locked || session.can('owner')));
  /** Re-measuring or confirming a failing result at the bench: while the study runs. */
  const benchStepOpen = computed(() => sheet.value?.sample.study.status === 'running');

  return { recordEarly, opensLater, mayRecordEarly, recordingOpen, photosOpen, canCorrect, benchStepOpen };
}

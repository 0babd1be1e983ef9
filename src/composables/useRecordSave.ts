/**
 * Saving the Record screen: the typed entries checked here first (the server's own messages where it
 * can), sent in one request, errors beside their attributes; offline, the draft waits on this device
 * and is sent again by itself; after a 409 (recorded meanwhile), what differs from what was typed here.
 */
import { computed, nextTick, ref, watch, type ComputedRef, type Ref } from 'vue';
import { ElMessage } from 'element-plus';
import { recordInput, type RecordEntry, type RecordSheet } from '@shared/schemas/records';
import { api, ApiError } from '@/api/client';
import { draftValue, entryHasContent, methodForApi, typedProblem, valueText, type EntryDraft } from '@/components/record/format';
import { useRetry } from '@/composables/useDraft';
import type { useRecordEntries } from '@/composables/useRecordEntries';
import { sheetPath } from '@/composables/useRecordSheet';
import { isOffline, offlineKit, outboxState } from '@/offline/status';
import { useSessionStore } from '@/stores/session';

export type SaveOutcome = 'saved' | 'nothing' | 'invalid' | 'offline' | 'refused';

interface Options {
  sheet: Ref<RecordSheet | null>;
  typed: ReturnType<typeof useRecordEntries>;
  recordEarly: Ref<boolean>;
  /** Reloads the sheet (after a refusal). */
  reload: () => Promise<void>;
  apply: (s: RecordSheet) => void;
  /** The server took these attributes' values. */
  onSaved: (studyAttributeIds: number[]) => void;
}

/** Server field names "entries.N.value" back to the attribute of entry N. */
function fieldsToAttributes(fields: Record<string, string>, ids: number[]): Record<number, string> {
  const out: Record<number, string> = {};
  for (const [k, v] of Object.entries(fields)) {
    const m = /^entries\.(\d+)\./.exec(k);
    const id = m ? ids[Number(m[1])] : undefined;
    if (id !== undefined) out[id] ??= v;
  }
  return out;
}

export async function focusFirstProblem() {
  await nextTick();
  const card = document.querySelector<HTMLElement>('.attr .error')?.closest<HTMLElement>('.attr');
  card?.scrollIntoView({ block: 'center', behavior: 'smooth' });
  card?.querySelector<HTMLElement>('input, textarea, [role="radio"][tabindex="0"]')?.focus({ preventScroll: true });
}

export function useRecordSave(o: Options) {
  const { draft, entries } = o.typed;
  const session = useSessionStore();
  const saving = ref(false);
  const formError = ref('');
  /** Messages beside attributes, by studyAttributeId. */
  const fieldErrors = ref<Record<number, string>>({});
  /** Values typed here that someone else recorded first (kept to show, not to send). */
  const overtaken = ref<string[]>([]);

  const attrs = () => o.sheet.value?.attributes ?? [];
  const toSend: ComputedRef<RecordSheet['attributes']> = computed(() => attrs().filter((a) => !a.current && entryHasContent(entries.value[String(a.studyAttributeId)])));
  const missing = computed(() => attrs().filter((a) => !a.current && !entryHasContent(entries.value[String(a.studyAttributeId)])));

  function resetMessages() {
    formError.value = '';
    fieldErrors.value = {};
    overtaken.value = [];
  }

  function clearFieldError(studyAttributeId: number) {
    if (!fieldErrors.value[studyAttributeId]) return;
    const rest = { ...fieldErrors.value };
    delete rest[studyAttributeId];
    fieldErrors.value = rest;
  }

  /** The entries to send, in sheet order, with client-side checks. */
  function collect(): { list: RecordEntry[]; ids: number[]; problems: Record<number, string> } {
    const list: RecordEntry[] = [];
    const ids: number[] = [];
    const problems: Record<number, string> = {};
    for (const item of toSend.value) {
      const e = entries.value[String(item.studyAttributeId)];
      const method = methodForApi(item.attribute.methodFields, e.method);
      if (e.notDone) {
        const reason = e.notDoneReason.trim();
        if (reason.length < 3) problems[item.studyAttributeId] = 'Give a reason (at least 3 characters)';
        list.push({ studyAttributeId: item.studyAttributeId, notDoneReason: reason, ...(method ? { method } : {}) });
      } else {
        const problem = typedProblem(item.attribute, e.value);
        if (problem) problems[item.studyAttributeId] = problem;
        list.push({ studyAttributeId: item.studyAttributeId, value: draftValue(item.attribute, e.value), ...(method ? { method } : {}) });
      }
      ids.push(item.studyAttributeId);
    }
    return { list, ids, problems };
  }

  /** Client checks failed: show them beside the fields; a pending retry stops until the person fixes them. */
  async function invalid(problems: Record<number, string>, quiet?: boolean): Promise<SaveOutcome> {
    fieldErrors.value = problems;
    formError.value = 'Check the values marked below; nothing was saved.';
    if (draft.pending.value) draft.markConfirmed();
    if (!quiet) await focusFirstProblem();
    return 'invalid';
  }

  async function save(opts: { quiet?: boolean } = {}): Promise<SaveOutcome> {
    const s = o.sheet.value;
    if (!s || saving.value) return 'refused';
    formError.value = '';
    const { list, ids, problems } = collect();
    if (!list.length) return 'nothing';
    if (Object.keys(problems).length) return invalid(problems, opts.quiet);
    const checked = recordInput.safeParse({ entries: list, ...(o.recordEarly.value ? { allowEarly: true } : {}) });
    if (!checked.success) {
      return invalid(fieldsToAttributes(Object.fromEntries(checked.error.issues.map((i) => [i.path.join('.'), i.message])), ids), opts.quiet);
    }
    saving.value = true;
    try {
      // Earlier saves still wait on this device: this one goes behind them, so they are sent in order.
      if (outboxState.waiting > outboxState.attention && session.user) return await keepOnDevice(s, checked.data.entries);
      const res = await api.put<{ sheet: RecordSheet }>(`${sheetPath(s.sample.code, s.checkpoint.id)}/observations`, checked.data);
      for (const e of list) o.typed.rememberMethod(e.studyAttributeId, e.method);
      const wasPending = draft.pending.value;
      draft.markConfirmed();
      o.apply(res.sheet);
      fieldErrors.value = {};
      if (!opts.quiet || wasPending) {
        ElMessage.success(`${list.length} ${list.length === 1 ? 'reading' : 'readings'} of ${s.sample.code} saved${wasPending ? ' (sent from the draft kept on this device)' : ''}`);
      }
      o.onSaved(ids);
      return 'saved';
    } catch (e) {
      if (!(e instanceof ApiError)) throw e;
      if (isOffline(e)) {
        if (session.user) return await keepOnDevice(s, checked.data.entries);
        draft.markPending();
        return 'offline';
      }
      if (e.status === 409 && Object.keys(e.fields).some((k) => k.startsWith('entries.'))) {
        // Someone (or this tablet, before the connection dropped) recorded these already.
        await reconcile(fieldsToAttributes(e.fields, ids));
        return 'refused';
      }
      draft.markConfirmed();
      if (e.status === 409) {
        await o.reload();
        formError.value = e.message;
        return 'refused';
      }
      fieldErrors.value = fieldsToAttributes(e.fields, ids);
      formError.value = Object.keys(fieldErrors.value).length ? 'Check the values marked below; nothing was saved.' : e.message;
      await focusFirstProblem();
      return 'refused';
    } finally {
      saving.value = false;
    }
  }

  /** Saves kept on this device from this screen: once the server has them (the sheet reloads), failing results are asked about. */
  const sentLater = ref<{ code: string; checkpointId: number; ids: number[] } | null>(null);
  watch(o.sheet, (sh) => {
    const w = sentLater.value;
    if (!w || !sh) return;
    if (sh.sample.code !== w.code || sh.checkpoint.id !== w.checkpointId) {
      sentLater.value = null;
      return;
    }
    const got = sh.attributes.filter((a) => w.ids.includes(a.studyAttributeId));
    if (got.length && got.every((a) => (a.current?.id ?? 0) > 0)) {
      sentLater.value = null;
      o.onSaved(w.ids);
    }
  });

  /** No connection: the save goes into this device's outbox (src/offline/outbox.ts) and is sent when the connection returns. */
  async function keepOnDevice(s: RecordSheet, list: RecordEntry[]): Promise<SaveOutcome> {
    const user = session.user!;
    const k = await offlineKit();
    await k.queueSave(user, s, list, o.recordEarly.value);
    sentLater.value = { code: s.sample.code, checkpointId: s.checkpoint.id, ids: list.map((e) => e.studyAttributeId) };
    for (const e of list) o.typed.rememberMethod(e.studyAttributeId, e.method);
    draft.markConfirmed();
    o.apply(await k.withOutbox(user, s));
    fieldErrors.value = {};
    ElMessage.success(`${list.length} ${list.length === 1 ? 'reading' : 'readings'} of ${s.sample.code} saved on this device, not yet sent`);
    if (navigator.onLine) void k.sendAll(user);
    return 'saved';
  }

  /** After a 409: reload, drop what is now recorded, and say where the recorded value differs from what was typed here. */
  async function reconcile(conflicts: Record<number, string>) {
    const typed: Record<string, EntryDraft> = { ...entries.value };
    draft.markConfirmed();
    await o.reload();
    const s = o.sheet.value;
    if (!s) return;
    const notes: string[] = [];
    for (const id of Object.keys(conflicts).map(Number)) {
      const item = s.attributes.find((a) => a.studyAttributeId === id);
      const mine = typed[String(id)];
      if (!item?.current || !mine) continue;
      const same = mine.notDone ? item.current.verdict === 'not_done' : draftValue(item.attribute, mine.value) === item.current.value;
      if (!same) {
        notes.push(
          `${item.attribute.name}: ${item.current.recordedBy} recorded ${valueText(item.attribute, item.current.value)}; ` +
            `your ${mine.notDone ? '"not done"' : valueText(item.attribute, draftValue(item.attribute, mine.value))} was not saved. Correct it with a reason if needed.`,
        );
      }
    }
    overtaken.value = notes;
    if (!notes.length && collect().list.length) await save({ quiet: true });
    else if (!notes.length) ElMessage.success('Saved');
  }

  const { retryNow } = useRetry(draft.pending, () => save({ quiet: true }));

  return { saving, formError, fieldErrors, overtaken, toSend, missing, save, retryNow, resetMessages, clearFieldError };
}

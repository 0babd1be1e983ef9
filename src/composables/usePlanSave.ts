/**
 * Saving a plan: checks it with the shared schema (marks beside the fields, nothing sent), saves the
 * draft (POST, then PUT), and starts the study after the confirm dialog. Once the user has tried to
 * save, the marks follow what they fix.
 */
import { nextTick, reactive, watch } from 'vue';
import { useRouter } from 'vue-router';
import { ElMessage } from 'element-plus';
import { studyPlanInput, type StudyDetail } from '@shared/schemas/studies';
import { ApiError } from '@/api/client';
import type { useFieldErrors } from '@/composables/useFieldErrors';
import type { PlanForm } from '@/composables/usePlanForm';
import { useStudiesStore } from '@/stores/studies';

export function usePlanSave(plan: PlanForm, fieldErrors: ReturnType<typeof useFieldErrors>) {
  const router = useRouter();
  const store = useStudiesStore();
  const { errors, clear, setFrom, validate } = fieldErrors;
  const state = reactive({ submitted: false, saving: '' as '' | 'draft' | 'start', confirmOpen: false, savedAt: '' });

  function reset() {
    state.submitted = false;
    state.savedAt = '';
  }

  async function scrollToFirstError() {
    await nextTick();
    const el = document.querySelector('.plan .is-error, .plan .kw-field-error') ?? document.querySelector('.plan .form-alert');
    el?.scrollIntoView({ behavior: 'smooth', block: 'center' });
  }

  /** Plainer words for the schema's generic "Choose one" where the field is known. */
  function plainer() {
    const names: Record<string, string> = { productId: 'Choose the product to test', responsibleId: 'Choose a member of your lab' };
    for (const [k, m] of Object.entries(names)) if (errors[k] === 'Choose one') errors[k] = m;
  }

  watch(
    () => JSON.stringify(plan.payload()),
    () => {
      if (!state.submitted) return;
      clear();
      validate(studyPlanInput, plan.payload());
      plainer();
    },
  );

  function check() {
    clear();
    state.submitted = true;
    const input = validate(studyPlanInput, plan.payload());
    plainer();
    if (!input) void scrollToFirstError();
    return input;
  }

  async function save(kind: 'draft' | 'start'): Promise<StudyDetail | null> {
    const input = check();
    if (!input) return null;
    state.saving = kind;
    try {
      const s = await store.save(input, plan.currentId);
      const isNew = !plan.currentId;
      plan.currentId = s.id;
      plan.study = s;
      state.savedAt = new Intl.DateTimeFormat('en-GB', { timeStyle: 'short', timeZone: plan.timeZone }).format(new Date());
      if (isNew) await router.replace({ name: 'study-edit', params: { studyId: s.id } });
      return s;
    } catch (e) {
      if (e instanceof ApiError) {
        setFrom(e);
        void scrollToFirstError();
        return null;
      }
      throw e;
    } finally {
      state.saving = '';
    }
  }

  async function saveDraft() {
    const s = await save('draft');
    if (s) ElMessage.success('Draft saved');
  }

  function askStart() {
    if (check()) state.confirmOpen = true;
  }

  async function startStudy() {
    const s = await save('start');
    if (!s) {
      state.confirmOpen = false;
      return;
    }
    state.saving = 'start';
    try {
      await store.start(s.id);
      state.confirmOpen = false;
      ElMessage.success('Study started: samples and checkpoints are ready');
      await router.push({ name: 'study', params: { studyId: s.id } });
    } catch (e) {
      state.confirmOpen = false;
      if (e instanceof ApiError) {
        setFrom(e);
        void scrollToFirstError();
      } else throw e;
    } finally {
      state.saving = '';
    }
  }

  return Object.assign(state, { reset, saveDraft, askStart, startStudy });
}

export type PlanSave = ReturnType<typeof usePlanSave>;

/**
 * The live plan preview: once the plan passes the shared schema, POST /studies/preview a moment
 * after each change (nothing is stored). The server's 400 fields are marked beside the fields,
 * e.g. a day 0 left in a draft ("conditions.0.offsets.0").
 */
import { onBeforeUnmount, reactive, watch } from 'vue';
import { studyPlanInput, type PlanPreview } from '@shared/schemas/studies';
import { ApiError } from '@/api/client';
import { missingFrom } from '@/components/studies/planErrors';
import type { useFieldErrors } from '@/composables/useFieldErrors';
import { useStudiesStore } from '@/stores/studies';

export function usePlanPreview(opts: {
  payload: () => unknown;
  /** True while the plan itself is loading: no preview then. */
  loading: () => boolean;
  /** True once the user has tried to save: the marks then follow the schema, not the preview. */
  submitted: () => boolean;
  fieldErrors: Pick<ReturnType<typeof useFieldErrors>, 'errors' | 'clear'>;
}) {
  const store = useStudiesStore();
  const { errors, clear } = opts.fieldErrors;
  const preview = reactive({ data: null as PlanPreview | null, loading: false, error: '', missing: [] as string[] });
  let timer: ReturnType<typeof setTimeout> | undefined;
  let seq = 0;
  /** True while the marks beside the fields come from the preview's server check (cleared once it passes). */
  let marksFromPreview = false;

  async function refresh() {
    const parsed = studyPlanInput.safeParse(opts.payload());
    if (!parsed.success) {
      preview.missing = missingFrom(parsed.error.issues.map((i) => i.path as (string | number)[]));
      preview.error = '';
      return;
    }
    const mine = ++seq;
    preview.loading = true;
    try {
      const data = await store.preview(parsed.data);
      if (mine !== seq) return;
      preview.data = data;
      preview.missing = [];
      preview.error = '';
      if (marksFromPreview && !opts.submitted()) clear();
      marksFromPreview = false;
    } catch (e) {
      if (mine !== seq) return;
      if (e instanceof ApiError && Object.keys(e.fields).length) {
        clear();
        for (const [k, v] of Object.entries(e.fields)) errors[k] = v;
        marksFromPreview = true;
        preview.error = 'The plan has problems, marked beside the fields.';
      } else {
        preview.error = e instanceof ApiError ? e.message : 'The preview could not be made.';
      }
    } finally {
      if (mine === seq) preview.loading = false;
    }
  }

  watch(
    () => (opts.loading() ? '' : JSON.stringify(opts.payload())),
    (v) => {
      if (!v) return;
      clearTimeout(timer);
      timer = setTimeout(() => void refresh(), 450);
    },
    { immediate: true },
  );
  onBeforeUnmount(() => clearTimeout(timer));

  return preview;
}

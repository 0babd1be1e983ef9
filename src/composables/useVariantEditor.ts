/**
 * The variant editor's state: the variant and its batches as loaded, the header and formula lines
 * being edited (by % w/w or by weighed grams), the live total and range warnings, saving, and the
 * guard against leaving with unsaved changes.
 */
import { computed, onBeforeUnmount, onMounted, reactive, ref, watch } from 'vue';
import { onBeforeRouteLeave, onBeforeRouteUpdate, useRoute } from 'vue-router';
import { ElMessage, ElMessageBox } from 'element-plus';
// The message box is used as a service here, so its styles are not pulled in on demand.
import 'element-plus/theme-chalk/el-overlay.css';
import 'element-plus/theme-chalk/el-message-box.css';
import { formulaTotal, percentFromGrams, rangeWarnings, type RangeWarning } from '@shared/compute/formula';
import { totalProblem, variantSaveInput, type BatchSummary, type Ingredient, type VariantDetail } from '@shared/schemas/formulas';
import { api, ApiError } from '@/api/client';
import { CAUTION_FUNCTIONS, parseTyped } from '@/components/formulas/format';
import { useFieldErrors } from '@/composables/useFieldErrors';
import { useFormulasStore } from '@/stores/formulas';
import { useSessionStore } from '@/stores/session';

export interface EditLine {
  key: number;
  ingredientId: number | null;
  phase: string;
  percentText: string;
  gramsText: string;
}

/** A stored percent as the input shows it: at least 2 decimals ("4.00", "0.3500" -> "0.35", "33.3333"). */
function editablePercent(p: number): string {
  const places = Math.min(4, Math.max(2, (String(p).split('.')[1] ?? '').length));
  return p.toFixed(places);
}

export function useVariantEditor() {
  const route = useRoute();
  const session = useSessionStore();
  const store = useFormulasStore();
  const canEdit = computed(() => session.can('formulator'));
  const variantId = computed(() => Number(route.params.variantId));

  const detail = ref<VariantDetail | null>(null);
  const batches = ref<BatchSummary[]>([]);
  const loading = ref(true);
  const missing = ref(false);
  const header = reactive({ code: '', name: '', notes: '' });
  const lines = ref<EditLine[]>([]);
  const mode = ref<'percent' | 'grams'>('percent');
  const saving = ref(false);
  const savedState = ref('');
  let nextKey = 1;

  const fieldErrors = useFieldErrors();
  const { errors, formError, clear, setFrom, validate } = fieldErrors;

  async function load(id = variantId.value) {
    loading.value = true;
    missing.value = false;
    try {
      const [d, b] = await Promise.all([
        api.get<VariantDetail>(`/variants/${id}`),
        api.get<{ batches: BatchSummary[] }>(`/variants/${id}/batches`),
        store.loadIngredients(),
      ]);
      apply(d);
      batches.value = b.batches;
    } catch (e) {
      if (e instanceof ApiError && e.status === 404) missing.value = true;
      else throw e;
    } finally {
      loading.value = false;
    }
  }

  function apply(d: VariantDetail) {
    detail.value = d;
    header.code = d.variant.code;
    header.name = d.variant.name;
    header.notes = d.variant.notes ?? '';
    lines.value = d.lines.map((l) => ({ key: nextKey++, ingredientId: l.ingredientId, phase: l.phase, percentText: editablePercent(l.percent), gramsText: '' }));
    mode.value = 'percent';
    clear();
    savedState.value = stateKey();
  }

  function stateKey() {
    return JSON.stringify({
      code: header.code.trim().toUpperCase(),
      name: header.name.trim(),
      notes: header.notes.trim(),
      lines: lines.value.map((l) => [l.ingredientId, l.phase.trim(), parseTyped(l.percentText)]),
    });
  }
  const dirty = computed(() => detail.value != null && canEdit.value && stateKey() !== savedState.value);
  /** After leaving the edits on purpose (a copy made of the saved lines): no more "unsaved changes". */
  function forget() {
    savedState.value = stateKey();
  }

  // ------------------------------------------------------------ live arithmetic

  const percents = computed(() => lines.value.map((l) => parseTyped(l.percentText)));
  const total = computed(() => formulaTotal(percents.value.map((p) => ({ percent: Number.isFinite(p) ? p : 0 }))));
  const ingredientOf = (l: EditLine) => (l.ingredientId != null ? store.byId.get(l.ingredientId) : undefined);

  const warnings = computed(() => {
    const list = rangeWarnings(
      lines.value.map((l, i) => {
        const ing = ingredientOf(l);
        return { ingredientName: ing?.tradeName ?? '', percent: percents.value[i], useMin: ing?.useMinPercent, useMax: ing?.useMaxPercent };
      }),
    );
    const byIndex = new Map<number, RangeWarning>();
    for (const w of list) byIndex.set(w.index, w);
    return byIndex;
  });
  const hasCaution = (l: EditLine) => CAUTION_FUNCTIONS.includes(ingredientOf(l)?.function ?? 'other');
  const gramsValues = computed(() => lines.value.map((l) => parseTyped(l.gramsText)));
  const gramsTotal = computed(() => gramsValues.value.reduce((s, g) => s + (Number.isFinite(g) && g > 0 ? g : 0), 0));
  const gramsErrors = computed(() =>
    gramsValues.value.map((g) => (mode.value !== 'grams' ? '' : !Number.isFinite(g) ? 'Enter the grams weighed' : g <= 0 ? 'More than 0 g' : '')),
  );

  /** Grams as weighed -> % w/w with 4 decimals that total exactly 100 (largest remainder). */
  function gramsChanged() {
    const g = gramsValues.value;
    if (g.some((x) => !Number.isFinite(x) || x < 0) || !(gramsTotal.value > 0)) return;
    const p = percentFromGrams(g);
    lines.value.forEach((l, i) => (l.percentText = String(p[i])));
  }

  // A refusal about the total goes stale as soon as the total changes.
  watch(
    () => total.value.total,
    () => {
      if (errors.lines) {
        delete errors.lines;
        formError.value = '';
      }
    },
  );

  watch(mode, (m) => {
    // Start from the formula as if for 100 g, so switching changes nothing until a weight is typed.
    if (m === 'grams') lines.value.forEach((l, i) => (l.gramsText = Number.isFinite(percents.value[i]) ? String(percents.value[i]) : ''));
  });

  // ------------------------------------------------------------ editing lines

  function addLine(ingredientId: number | null = null) {
    const last = lines.value[lines.value.length - 1];
    lines.value.push({ key: nextKey++, ingredientId, phase: last?.phase ?? 'A', percentText: '', gramsText: '' });
    clear();
  }
  function removeLine(i: number) {
    lines.value.splice(i, 1);
    clear();
    if (mode.value === 'grams') gramsChanged();
  }
  function move(i: number, by: -1 | 1) {
    const j = i + by;
    if (j < 0 || j >= lines.value.length) return;
    const list = lines.value;
    [list[i], list[j]] = [list[j], list[i]];
    clear();
  }
  function discard() {
    if (detail.value) apply(detail.value);
  }

  /**
   * An ingredient just added to the library goes into the line it was added from (by key); without
   * one, into the last line when it has no ingredient yet, else into a new line.
   */
  function placeIngredient(ing: Ingredient, lineKey: number | null) {
    const target = lines.value.find((l) => l.key === lineKey) ?? (lines.value.at(-1)?.ingredientId == null ? lines.value.at(-1) : undefined);
    if (target) target.ingredientId = ing.id;
    else addLine(ing.id);
  }

  async function save() {
    if (!detail.value) return;
    clear();
    if (mode.value === 'grams') {
      gramsErrors.value.forEach((msg, i) => msg && (errors[`lines.${i}.grams`] = msg));
      if (gramsErrors.value.some(Boolean)) {
        formError.value = 'Enter the grams weighed on every line.';
        return;
      }
    }
    const body = {
      code: header.code,
      name: header.name,
      notes: header.notes,
      lines: lines.value.map((l, i) => ({
        ingredientId: l.ingredientId ?? undefined,
        phase: l.phase,
        percent: Number.isFinite(percents.value[i]) ? percents.value[i] : l.percentText,
      })),
    };
    const input = validate(variantSaveInput, body);
    if (!input) {
      formError.value = 'Check the marked fields.';
      return;
    }
    const problem = totalProblem(formulaTotal(input.lines));
    if (problem) {
      errors.lines = problem;
      formError.value = problem;
      return;
    }
    saving.value = true;
    try {
      const d = await api.put<VariantDetail>(`/variants/${detail.value.variant.id}`, input);
      apply(d);
      const n = d.warnings.length;
      ElMessage.success(n ? `Saved, with ${n} range warning${n === 1 ? '' : 's'} to review` : 'Saved');
    } catch (e) {
      if (e instanceof ApiError) setFrom(e);
      else throw e;
    } finally {
      saving.value = false;
    }
  }

  // ------------------------------------------------------------ batches and scaling

  const packs = computed(() => [...new Set(batches.value.map((b) => b.packaging))]);
  const scaleLines = computed(() =>
    lines.value.map((l, i) => ({ phase: l.phase, tradeName: ingredientOf(l)?.tradeName ?? '(choose an ingredient)', percent: Number.isFinite(percents.value[i]) ? percents.value[i] : 0 })),
  );
  const scaleReady = computed(() => lines.value.length > 0 && total.value.ok && percents.value.every((p) => Number.isFinite(p) && p > 0));
  const batchBlocked = computed(() =>
    dirty.value
      ? 'To record a batch, save your changes first: a batch keeps the saved formula.'
      : !detail.value?.lines.length
        ? 'To record a batch, enter and save the lines first.'
        : !detail.value.total.ok
          ? 'To record a batch, the saved lines must total 100 %.'
          : '',
  );

  // ------------------------------------------------------------ leaving with unsaved changes

  async function confirmLeave(): Promise<boolean> {
    if (!dirty.value) return true;
    try {
      await ElMessageBox.confirm('This formula has unsaved changes. Leave and lose them?', 'Unsaved changes', {
        confirmButtonText: 'Leave',
        cancelButtonText: 'Stay',
        type: 'warning',
      });
      return true;
    } catch {
      return false;
    }
  }
  onBeforeRouteLeave(confirmLeave);
  onBeforeRouteUpdate(async (to) => {
    if (!(await confirmLeave())) return false;
    await load(Number(to.params.variantId));
    return true;
  });
  const beforeUnload = (e: BeforeUnloadEvent) => {
    if (dirty.value) e.preventDefault();
  };
  onMounted(() => {
    window.addEventListener('beforeunload', beforeUnload);
    void load();
  });
  onBeforeUnmount(() => window.removeEventListener('beforeunload', beforeUnload));

  return reactive({
    canEdit,
    detail,
    batches,
    loading,
    missing,
    header,
    lines,
    mode,
    saving,
    dirty,
    errors,
    formError,
    percents,
    total,
    warnings,
    gramsTotal,
    ingredients: computed(() => store.ingredients),
    packs,
    scaleLines,
    scaleReady,
    batchBlocked,
    ingredientOf,
    hasCaution,
    gramsChanged,
    addLine,
    removeLine,
    move,
    discard,
    placeIngredient,
    save,
    forget,
  });
}

export type VariantEditor = ReturnType<typeof useVariantEditor>;

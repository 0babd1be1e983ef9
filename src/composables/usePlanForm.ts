/**
 * The plan builder's form state: the plan being edited, the lab's options (products, batches,
 * conditions, attributes, members, templates), loading a draft or a new plan, the edits each step
 * makes, and the request body (studyPlanInput).
 */
import { computed, reactive, ref, watch } from 'vue';
import { useRoute } from 'vue-router';
import { localDateInZone, type Offset } from '@shared/compute/schedule';
import type { Criterion } from '@shared/compute/criteria';
import type { ConditionRole } from '@shared/domain';
import type { Attribute, StudyDetail } from '@shared/schemas/studies';
import { ApiError } from '@/api/client';
import { monthYear } from '@/components/studies/format';
import { STARTER_CODES, initialCriterion, suggestFor, templateList, templateOffsets } from '@/components/studies/planRules';
import type { useFieldErrors } from '@/composables/useFieldErrors';
import { useSessionStore } from '@/stores/session';
import { useStudiesStore, type OptionCondition, type PlanOptions } from '@/stores/studies';

export interface DraftCondition {
  conditionId: number;
  role: ConditionRole;
  template: string | null;
  offsets: Offset[];
  /** Read the control on the day of each pull (ignored for the control itself). */
  pairControl: boolean;
  pairingOffReason: string;
}
export interface DraftAttribute {
  attributeId: number;
  criterion: Criterion;
}

export function usePlanForm(fieldErrors: Pick<ReturnType<typeof useFieldErrors>, 'clear' | 'formError'>) {
  const route = useRoute();
  const session = useSessionStore();
  const store = useStudiesStore();

  const timeZone = computed(() => session.user?.lab.timeZone ?? 'UTC');
  const dateFormat = computed(() => session.user?.lab.dateFormat ?? 'YYYY-MM-DD');

  function todayLocal() {
    try {
      return localDateInZone(new Date(), timeZone.value);
    } catch {
      return localDateInZone(new Date(), 'UTC');
    }
  }

  function emptyForm() {
    return {
      productId: null as number | null,
      title: '',
      startDate: todayLocal(),
      batchIds: [] as number[],
      conditions: [] as DraftCondition[],
      attributes: [] as DraftAttribute[],
      samplesPerCell: 1,
      containerDescription: '',
      fillGrams: null as number | null,
      /** Everyone responsible, the main person first (sent as responsibleIds, the first also as responsibleId). */
      responsibleIds: [] as number[],
      notes: '',
    };
  }

  const form = reactive(emptyForm());
  const options = ref<PlanOptions | null>(null);
  const loading = ref(true);
  const loadError = ref('');
  const study = ref<StudyDetail | null>(null);
  /** Id of the draft once saved (POST, then PUT). */
  const currentId = ref<number | null>(null);
  const titleTouched = ref(false);

  // ---------------------------------------------------------------- options

  const products = computed(() => options.value?.products ?? []);
  const product = computed(() => products.value.find((p) => p.id === form.productId) ?? null);
  const batches = computed(() => (form.productId ? (options.value?.batches ?? []) : []));
  const conditions = computed(() => {
    const chosen = new Set(form.conditions.map((c) => c.conditionId));
    return (options.value?.conditions ?? []).filter((c) => c.active || chosen.has(c.id));
  });
  const attributes = computed(() => {
    const chosen = new Set(form.attributes.map((a) => a.attributeId));
    return (options.value?.attributes ?? []).filter((a) => a.active || chosen.has(a.id));
  });
  const members = computed(() => {
    const rank = { technician: 0, formulator: 1, owner: 2 } as const;
    return [...(options.value?.members ?? [])].sort((a, b) => rank[a.role] - rank[b.role] || a.name.localeCompare(b.name));
  });
  const templates = computed(() => templateList(options.value?.templates));
  const attributeById = computed(() => new Map((options.value?.attributes ?? []).map((a) => [a.id, a])));

  async function loadOptions(productId: number | null) {
    const before = options.value?.attributes ?? [];
    const next = await store.options(productId);
    // Keep attributes the plan uses that the options leave out (deactivated since).
    const known = new Set(next.attributes.map((a) => a.id));
    const chosen = new Set(form.attributes.map((a) => a.attributeId));
    next.attributes = [...next.attributes, ...before.filter((a) => !known.has(a.id) && chosen.has(a.id))];
    options.value = next;
  }

  // ---------------------------------------------------------------- loading a plan

  async function init() {
    loading.value = true;
    loadError.value = '';
    fieldErrors.clear();
    study.value = null;
    const id = route.params.studyId ? Number(route.params.studyId) : null;
    currentId.value = id;
    Object.assign(form, emptyForm());
    titleTouched.value = false;
    try {
      if (id) {
        const s = await store.get(id);
        study.value = s;
        Object.assign(form, {
          productId: s.product.id,
          title: s.title,
          startDate: s.startDate,
          batchIds: s.batches.map((b) => b.id),
          conditions: s.conditions.map((c) => ({
            conditionId: c.conditionId,
            role: c.role,
            template: c.template,
            offsets: c.offsets.map((o) => ({ ...o })),
            pairControl: c.pairControl ?? true,
            pairingOffReason: c.pairingOffReason ?? '',
          })),
          attributes: s.attributes.map((a) => ({ attributeId: a.attributeId, criterion: { ...a.criterion } })),
          samplesPerCell: s.samplesPerCell,
          containerDescription: s.containerDescription,
          fillGrams: s.fillGrams,
          responsibleIds: s.responsibles?.length ? s.responsibles.map((p) => p.id) : s.responsible ? [s.responsible.id] : [],
          notes: s.notes ?? '',
        });
        titleTouched.value = true;
        await loadOptions(s.product.id);
        // The options list active attributes only; a draft may use one deactivated since.
        const known = new Set(options.value?.attributes.map((a) => a.id));
        if (options.value && s.attributes.some((a) => !known.has(a.attributeId))) {
          const all = await store.loadAttributes();
          const wanted = new Set(s.attributes.map((a) => a.attributeId));
          options.value.attributes = [...options.value.attributes, ...all.filter((a) => !known.has(a.id) && wanted.has(a.id))];
        }
      } else {
        await loadOptions(null);
        const wanted = route.query.productId ? Number(route.query.productId) : null;
        if (wanted && options.value?.products.some((p) => p.id === wanted)) {
          form.productId = wanted;
          await loadOptions(wanted);
        }
        // The starter set, each with its default criterion.
        form.attributes = (options.value?.attributes ?? [])
          .filter((a) => a.active && STARTER_CODES.includes(a.code.toLowerCase()))
          .map((a) => ({ attributeId: a.id, criterion: initialCriterion(a) }));
        suggestTitle();
      }
    } catch (e) {
      loadError.value = e instanceof ApiError ? (e.status === 404 ? 'There is no such study in your lab.' : e.message) : String(e);
    } finally {
      loading.value = false;
    }
  }

  // ---------------------------------------------------------------- step 1

  const suggestedTitle = computed(() => (product.value ? `${product.value.name} stability, ${monthYear(form.startDate)}` : ''));
  function suggestTitle() {
    if (!titleTouched.value && suggestedTitle.value) form.title = suggestedTitle.value;
  }
  watch(() => form.startDate, suggestTitle);

  async function changeProduct(id: number) {
    form.productId = id;
    suggestTitle();
    try {
      await loadOptions(id);
    } catch (e) {
      if (e instanceof ApiError) fieldErrors.formError.value = e.message;
      else throw e;
    }
    const ids = new Set(batches.value.map((b) => b.id));
    form.batchIds = form.batchIds.filter((b) => ids.has(b));
  }

  const firstBatchPack = computed(() => batches.value.find((b) => form.batchIds.includes(b.id))?.packaging ?? '');

  // ---------------------------------------------------------------- step 2

  function toggleBatch(id: number, on: boolean) {
    const set = new Set(form.batchIds);
    if (on) set.add(id);
    else set.delete(id);
    // Keep the order of the list, so errors like "batchIds.1" point at a stable row.
    form.batchIds = batches.value.map((b) => b.id).filter((b) => set.has(b));
  }

  // ---------------------------------------------------------------- step 3

  function conditionIndex(id: number) {
    return form.conditions.findIndex((c) => c.conditionId === id);
  }

  function toggleCondition(c: OptionCondition, on: boolean) {
    if (on && conditionIndex(c.id) < 0) {
      const s = suggestFor(c);
      const row: DraftCondition = {
        conditionId: c.id,
        role: s.role,
        template: s.template,
        offsets: templateOffsets(templates.value, s.template, c),
        pairControl: true,
        pairingOffReason: '',
      };
      const order = (options.value?.conditions ?? []).map((x) => x.id);
      form.conditions = [...form.conditions, row].sort((a, b) => order.indexOf(a.conditionId) - order.indexOf(b.conditionId));
    } else if (!on) {
      form.conditions = form.conditions.filter((x) => x.conditionId !== c.id);
    }
  }

  function applyTemplate(row: DraftCondition, id: string, c: OptionCondition) {
    row.template = id;
    row.offsets = templateOffsets(templates.value, id, c);
  }

  // ---------------------------------------------------------------- step 4

  function attributeIndex(id: number) {
    return form.attributes.findIndex((a) => a.attributeId === id);
  }

  function toggleAttribute(a: Attribute, on: boolean) {
    if (on && attributeIndex(a.id) < 0) {
      const order = (options.value?.attributes ?? []).map((x) => x.id);
      form.attributes = [...form.attributes, { attributeId: a.id, criterion: initialCriterion(a) }].sort(
        (x, y) => order.indexOf(x.attributeId) - order.indexOf(y.attributeId),
      );
    } else if (!on) {
      form.attributes = form.attributes.filter((x) => x.attributeId !== a.id);
    }
  }

  // ---------------------------------------------------------------- the request body

  function payload() {
    return {
      productId: form.productId,
      title: form.title,
      startDate: form.startDate,
      batchIds: [...form.batchIds],
      conditions: form.conditions.map((c) => {
        // The control is what the pulls are paired with: it has no switch of its own.
        const off = c.role !== 'control' && !c.pairControl;
        return {
          conditionId: c.conditionId,
          role: c.role,
          template: c.template,
          offsets: c.offsets.map((o) => ({ ...o })),
          pairControl: !off,
          pairingOffReason: off ? c.pairingOffReason : null,
        };
      }),
      attributes: form.attributes.map((a) => ({ attributeId: a.attributeId, criterion: { ...a.criterion } })),
      samplesPerCell: form.samplesPerCell,
      containerDescription: form.containerDescription,
      fillGrams: form.fillGrams ?? null,
      responsibleId: form.responsibleIds[0] ?? null,
      responsibleIds: [...form.responsibleIds],
      notes: form.notes.trim() ? form.notes : null,
    };
  }

  return reactive({
    form,
    timeZone,
    dateFormat,
    options,
    loading,
    loadError,
    study,
    currentId,
    titleTouched,
    products,
    product,
    batches,
    conditions,
    attributes,
    members,
    templates,
    attributeById,
    suggestedTitle,
    firstBatchPack,
    init,
    changeProduct,
    toggleBatch,
    conditionIndex,
    toggleCondition,
    applyTemplate,
    attributeIndex,
    toggleAttribute,
    payload,
  });
}

export type PlanForm = ReturnType<typeof usePlanForm>;

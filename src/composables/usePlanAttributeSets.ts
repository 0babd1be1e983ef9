/**
 * The attribute set of the chosen product's type (the lab's own, or the default one): a new plan
 * ticks it when the product is chosen, as long as the ticked attributes are still the ones the
 * builder ticked itself (never over the formulator's own choice, a template or a copied study).
 */
import { computed, reactive, ref, watch } from 'vue';
import { PRODUCT_TYPE_LABELS, type ProductType } from '@shared/domain';
import type { AttributeSet } from '@shared/schemas/templates';
import { api } from '@/api/client';
import type { PlanForm } from '@/composables/usePlanForm';
import { initialCriterion, STARTER_CODES } from '@/components/studies/planRules';

const sorted = (a: readonly number[]) => [...a].sort((x, y) => x - y);
const sameIds = (a: readonly number[], b: readonly number[]) => a.length === b.length && sorted(a).every((x, i) => x === sorted(b)[i]);

export function usePlanAttributeSets(plan: PlanForm) {
  const sets = ref<AttributeSet[]>([]);
  /** The ids the builder ticked itself last (null: the starter ticks of a new plan). */
  const autoIds = ref<number[] | null>(null);
  /** Set once a template or a previous study filled the plan: the set no longer follows the product. */
  const locked = ref(false);

  void api
    .get<{ sets: AttributeSet[] }>('/attribute-sets')
    .then((r) => (sets.value = r.sets))
    .catch(() => (sets.value = []));

  const productType = computed(() => (plan.product?.type ?? null) as ProductType | null);
  const set = computed(() => sets.value.find((s) => s.productType === productType.value) ?? null);
  const chosen = computed(() => plan.form.attributes.map((a) => a.attributeId));
  /** Attributes of the set this lab can tick (active, in the options). */
  const setIds = computed(() => (set.value?.attributeIds ?? []).filter((id) => plan.attributes.some((a) => a.id === id)));
  const matches = computed(() => !!set.value && sameIds(chosen.value, setIds.value));

  function apply() {
    if (!set.value) return;
    const byId = new Map(plan.attributes.map((a) => [a.id, a]));
    plan.form.attributes = setIds.value.map((id) => ({ attributeId: id, criterion: initialCriterion(byId.get(id)!) }));
    autoIds.value = [...setIds.value];
  }

  watch(
    () => [plan.form.productId, set.value, plan.loading] as const,
    () => {
      if (plan.loading || plan.currentId || locked.value || !set.value) return;
      // Only over the builder's own ticks: the starter ticks of a new plan, or the last set it applied.
      const starter = plan.attributes.filter((a) => a.active && STARTER_CODES.includes(a.code.toLowerCase())).map((a) => a.id);
      const untouched = sameIds(chosen.value, autoIds.value ?? starter);
      if (untouched && !matches.value) apply();
    },
    { immediate: true },
  );

  return reactive({
    set,
    label: computed(() => (productType.value ? PRODUCT_TYPE_LABELS[productType.value] : '')),
    names: computed(() => setIds.value.map((id) => plan.attributes.find((a) => a.id === id)?.name ?? '').filter(Boolean)),
    matches,
    apply,
    lock: () => (locked.value = true),
    unlock: () => {
      locked.value = false;
      autoIds.value = null;
    },
  });
}

export type PlanAttributeSets = ReturnType<typeof usePlanAttributeSets>;

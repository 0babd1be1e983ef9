/**
 * State of a variant's microbial-risk panel: the saved assessment, the form (prefilled from the
 * study's initial readings and the latest batch's pack when nothing is saved), a live outcome with
 * the shared rules, and saving with field errors beside their fields.
 */
import { computed, reactive, ref, watch, type Ref } from 'vue';
import { ApiError, api } from '@/api/client';
import { useFieldErrors } from '@/composables/useFieldErrors';
import { assessRisk, type PackType } from '@shared/compute/microbial-risk';
import { suggestPao } from '@shared/compute/period-after-opening';
import { riskInput, type RiskInput, type RiskView } from '@shared/schemas/product-file';

export interface RiskForm {
  ph: number | null;
  phSource: string;
  waterActivity: number | null;
  waterActivitySource: string;
  alcoholPercent: number | null;
  fillingTempC: number | null;
  fillingTempSource: string;
  pack: PackType | null;
  solventBased: boolean;
  oxidising: boolean;
  inUseMonths: number | null;
  decidedPaoMonths: number | null;
  note: string;
}

const blank = (): RiskForm => ({
  ph: null,
  phSource: '',
  waterActivity: null,
  waterActivitySource: '',
  alcoholPercent: null,
  fillingTempC: null,
  fillingTempSource: '',
  pack: null,
  solventBased: false,
  oxidising: false,
  inUseMonths: null,
  decidedPaoMonths: null,
  note: '',
});

export function useMicrobialRisk(variantId: Ref<number | null>) {
  const view = ref<RiskView | null>(null);
  const form = reactive<RiskForm>(blank());
  const loading = ref(false);
  const saving = ref(false);
  const { errors, formError, setFrom, validate, clear } = useFieldErrors();

  function fill(v: RiskView) {
    const e = v.assessment?.entered;
    Object.assign(form, blank());
    if (e) {
      Object.assign(form, {
        ...e,
        phSource: e.phSource ?? '',
        waterActivitySource: e.waterActivitySource ?? '',
        fillingTempSource: e.fillingTempSource ?? '',
        alcoholPercent: e.alcoholPercent ?? null,
        note: e.note ?? '',
      });
    } else {
      form.ph = v.proposed.ph;
      form.phSource = v.proposed.phSource ?? '';
      form.waterActivity = v.proposed.waterActivity;
      form.waterActivitySource = v.proposed.waterActivitySource ?? '';
      form.pack = v.proposed.pack;
      form.fillingTempC = v.proposed.fillingTempC;
      form.fillingTempSource = v.proposed.fillingTempSource ?? '';
    }
  }

  async function load() {
    if (variantId.value == null) return;
    loading.value = true;
    try {
      view.value = (await api.get<{ risk: RiskView }>(`/variants/${variantId.value}/risk`)).risk;
      fill(view.value);
    } finally {
      loading.value = false;
    }
  }
  watch(variantId, () => void load(), { immediate: true });

  // Element Plus sets a cleared select or number to undefined: sent as null.
  const body = (): RiskInput => ({
    ph: form.ph ?? null,
    phSource: form.phSource.trim() || null,
    waterActivity: form.waterActivity ?? null,
    waterActivitySource: form.waterActivitySource.trim() || null,
    alcoholPercent: form.alcoholPercent ?? null,
    fillingTempC: form.fillingTempC ?? null,
    fillingTempSource: form.fillingTempSource.trim() || null,
    pack: form.pack ?? null,
    solventBased: form.solventBased,
    oxidising: form.oxidising,
    inUseMonths: form.inUseMonths ?? null,
    decidedPaoMonths: (form.decidedPaoMonths ?? null) as RiskInput['decidedPaoMonths'],
    note: form.note.trim() || null,
  });

  /** The outcome of what the form says now (the same rules as the server). */
  const live = computed(() => {
    if (!view.value) return null;
    const f = view.value.formula;
    const outcome = assessRisk({
      waterPercent: f.waterPercent,
      alcoholPercent: form.alcoholPercent ?? f.alcoholPercent,
      aluminiumChlorohydratePercent: f.aluminiumChlorohydratePercent,
      ph: form.ph ?? null,
      waterActivity: form.waterActivity ?? null,
      fillingTempC: form.fillingTempC ?? null,
      solventBased: form.solventBased,
      oxidising: form.oxidising,
      pack: form.pack ?? null,
    });
    // Study in-use data wins over the hand-entered figure; the shelf life caps the period.
    const inUseMonths = view.value.inUse ? view.value.inUse.months : (form.inUseMonths ?? null);
    return { outcome, pao: suggestPao({ lowRisk: outcome.lowRisk, pack: form.pack ?? null, inUseMonths, shelfLifeMonths: view.value.shelfLife?.months ?? null }) };
  });

  async function save(): Promise<boolean> {
    const input = validate(riskInput, body());
    if (!input || variantId.value == null) return false;
    saving.value = true;
    clear();
    try {
      view.value = (await api.put<{ risk: RiskView }>(`/variants/${variantId.value}/risk`, input)).risk;
      fill(view.value);
      return true;
    } catch (e) {
      if (e instanceof ApiError) setFrom(e);
      else throw e;
      return false;
    } finally {
      saving.value = false;
    }
  }

  return reactive({ view, form, live, loading, saving, errors, formError, load, save });
}

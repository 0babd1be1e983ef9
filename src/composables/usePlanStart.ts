/**
 * Where a new plan starts from: blank, a saved whole-study template, or a copy of a previous study
 * (its plan without batches or dates); and saving the plan being built as a template.
 */
import { reactive } from 'vue';
import type { StudySummary } from '@shared/schemas/studies';
import type { PlanDraftResponse, StudyTemplateInput, StudyTemplateSummary } from '@shared/schemas/templates';
import { api, ApiError } from '@/api/client';
import type { PlanForm } from '@/composables/usePlanForm';
import { useStudiesStore } from '@/stores/studies';

export type StartKind = 'blank' | 'template' | 'study';

export function usePlanStart(plan: PlanForm, hooks: { applied?: () => void; blank?: () => void } = {}) {
  const store = useStudiesStore();
  const state = reactive({
    kind: 'blank' as StartKind,
    templates: [] as StudyTemplateSummary[],
    studies: [] as StudySummary[],
    templateId: null as number | null,
    studyId: null as number | null,
    loading: false,
    applying: false,
    /** What the plan was started from, once applied: "Emulsion 12 weeks". */
    appliedFrom: null as PlanDraftResponse['from'] | null,
    leftOut: [] as string[],
    error: '',
  });

  async function loadChoices() {
    state.loading = true;
    try {
      const [t, s] = await Promise.all([api.get<{ templates: StudyTemplateSummary[] }>('/study-templates'), store.list()]);
      state.templates = t.templates;
      state.studies = s.filter((x) => x.status !== 'draft' || x.id !== plan.currentId);
    } catch (e) {
      state.error = e instanceof ApiError ? e.message : String(e);
    } finally {
      state.loading = false;
    }
  }

  /** Puts a draft into the form: conditions, checkpoints, pairing, attributes and criteria, samples and container. */
  async function apply(res: PlanDraftResponse) {
    const d = res.draft;
    if (d.productId != null && d.productId !== plan.form.productId) await plan.changeProduct(d.productId);
    plan.form.conditions = d.conditions.map((c) => ({
      conditionId: c.conditionId,
      role: c.role,
      template: c.template ?? null,
      offsets: c.offsets.map((o) => ({ ...o })),
      pairControl: c.pairControl ?? true,
      pairingOffReason: c.pairingOffReason ?? '',
    }));
    plan.form.attributes = d.attributes.map((a) => ({ attributeId: a.attributeId, criterion: { ...a.criterion } }));
    plan.form.samplesPerCell = d.samplesPerCell;
    plan.form.containerDescription = d.containerDescription;
    plan.form.fillGrams = d.fillGrams;
    if (d.notes) plan.form.notes = d.notes;
    state.appliedFrom = res.from;
    state.leftOut = res.leftOut;
    hooks.applied?.();
  }

  async function choose(kind: StartKind, id: number | null) {
    state.error = '';
    state.kind = kind;
    if (kind === 'template') state.templateId = id;
    if (kind === 'study') state.studyId = id;
    if (kind === 'blank') {
      state.appliedFrom = null;
      state.leftOut = [];
      state.templateId = null;
      state.studyId = null;
      hooks.blank?.();
      await plan.init();
      return;
    }
    if (id == null) return;
    state.applying = true;
    try {
      await apply(await api.get<PlanDraftResponse>(kind === 'template' ? `/study-templates/${id}/draft` : `/studies/${id}/plan-draft`));
    } catch (e) {
      state.error = e instanceof ApiError ? e.message : String(e);
    } finally {
      state.applying = false;
    }
  }

  /** Saves the plan being built as a template; answers the template, or throws the ApiError (fields beside the dialog's inputs). */
  async function saveTemplate(name: string, description: string | null) {
    const p = plan.payload();
    const body: StudyTemplateInput = {
      name,
      description,
      plan: { conditions: p.conditions, attributes: p.attributes, samplesPerCell: p.samplesPerCell, containerDescription: p.containerDescription, fillGrams: p.fillGrams },
    };
    const { template } = await api.post<{ template: StudyTemplateSummary }>('/study-templates', body);
    state.templates = [...state.templates, template].sort((a, b) => a.name.localeCompare(b.name));
    return template;
  }

  async function deleteTemplate(id: number) {
    await api.delete(`/study-templates/${id}`);
    state.templates = state.templates.filter((t) => t.id !== id);
    if (state.templateId === id) state.templateId = null;
  }

  return Object.assign(state, { loadChoices, choose, saveTemplate, deleteTemplate });
}

export type PlanStart = ReturnType<typeof usePlanStart>;

/**
 * Study planning: the API calls of the studies list, the plan builder and the attribute library,
 * with the response types of the Studies API contract (shared/schemas/studies.ts).
 */
import { defineStore } from 'pinia';
import { ref } from 'vue';
import type { Offset } from '@shared/compute/schedule';
import type { ConditionKind, ConditionRole, StudyStatus } from '@shared/domain';
import type { Role } from '@shared/roles';
import type {
  Attribute,
  AttributeInput,
  PlanBatch,
  PlanPreview,
  StudyDetail,
  StudyPlanInput,
  StudySummary,
} from '@shared/schemas/studies';
import { api } from '@/api/client';

export interface OptionCondition {
  id: number;
  name: string;
  kind: ConditionKind;
  location: string;
  isControl: boolean;
  setpointC: number | null;
  rhPercent: number | null;
  cycleHours: number | null;
  active: boolean;
}

export interface OptionTemplate {
  id: string;
  label: string;
  offsets: Offset[];
  suggestedRole: ConditionRole;
}

export interface PlanOptions {
  products: { id: number; name: string; type: string }[];
  batches: PlanBatch[];
  conditions: OptionCondition[];
  attributes: Attribute[];
  members: { id: number; name: string; role: Role }[];
  templates: OptionTemplate[];
}

export const useStudiesStore = defineStore('studies', () => {
  /** The attribute library (active and inactive), as last loaded by the library page. */
  const attributes = ref<Attribute[] | null>(null);

  async function list(status?: StudyStatus | '') {
    const q = status ? `?status=${encodeURIComponent(status)}` : '';
    return (await api.get<{ studies: StudySummary[] }>(`/studies${q}`)).studies;
  }

  async function options(productId?: number | null) {
    const q = productId ? `?productId=${productId}` : '';
    return api.get<PlanOptions>(`/studies/options${q}`);
  }

  async function get(id: number) {
    return (await api.get<{ study: StudyDetail }>(`/studies/${id}`)).study;
  }

  async function save(input: StudyPlanInput, id?: number | null) {
    const res = id
      ? await api.put<{ study: StudyDetail }>(`/studies/${id}`, input)
      : await api.post<{ study: StudyDetail }>('/studies', input);
    return res.study;
  }

  async function preview(input: StudyPlanInput) {
    return (await api.post<{ preview: PlanPreview }>('/studies/preview', input)).preview;
  }

  async function start(id: number) {
    return (await api.post<{ study: StudyDetail }>(`/studies/${id}/start`)).study;
  }

  async function loadAttributes() {
    attributes.value = (await api.get<{ attributes: Attribute[] }>('/attributes')).attributes;
    return attributes.value;
  }

  async function createAttribute(input: AttributeInput) {
    const { attribute } = await api.post<{ attribute: Attribute }>('/attributes', input);
    if (attributes.value) attributes.value = [...attributes.value, attribute];
    return attribute;
  }

  async function setAttributeActive(id: number, active: boolean) {
    const { attribute } = await api.patch<{ attribute: Attribute }>(`/attributes/${id}`, { active });
    if (attributes.value) attributes.value = attributes.value.map((a) => (a.id === id ? attribute : a));
    return attribute;
  }

  return { attributes, list, options, get, save, preview, start, loadAttributes, createAttribute, setAttributeActive };
});

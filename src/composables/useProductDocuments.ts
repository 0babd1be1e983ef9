/** Documents of a variant (list and upload), with the server's field errors beside their fields. */
import { reactive, ref, watch, type Ref } from 'vue';
import { ApiError, api } from '@/api/client';
import { useFieldErrors } from '@/composables/useFieldErrors';
import { ISO11930_ORGANISMS, type DocumentKind, type DocumentView, type Iso11930Criteria } from '@shared/schemas/product-file';

export interface DocumentForm {
  kind: DocumentKind;
  title: string;
  documentDate: string;
  author: string;
  summary: string;
  criteria: Iso11930Criteria | '';
  organisms: Record<string, 'meets' | 'fails' | ''>;
  file: File | null;
}

export const blankDocument = (): DocumentForm => ({
  kind: 'challenge_test',
  title: '',
  documentDate: '',
  author: '',
  summary: '',
  criteria: '',
  organisms: Object.fromEntries(ISO11930_ORGANISMS.map((o) => [o, ''])),
  file: null,
});

/** The multipart body the upload routes read. */
export function documentFormData(f: DocumentForm): FormData {
  const fd = new FormData();
  for (const k of ['kind', 'title', 'documentDate', 'author', 'summary'] as const) fd.append(k, f[k]);
  if (f.kind === 'challenge_test') {
    if (f.criteria) fd.append('criteria', f.criteria);
    const organisms = Object.entries(f.organisms)
      .filter(([, r]) => r)
      .map(([organism, result]) => ({ organism, result }));
    if (organisms.length) fd.append('organisms', JSON.stringify(organisms));
  }
  if (f.file) fd.append('file', f.file, f.file.name);
  return fd;
}

/** `path`: '/variants/12' or '/studies/3'. */
export function useDocumentUpload(path: Ref<string>) {
  const form = reactive<DocumentForm>(blankDocument());
  const saving = ref(false);
  const { errors, formError, setFrom, clear } = useFieldErrors();
  async function send(): Promise<boolean> {
    clear();
    if (!form.file) {
      errors.file = 'Choose a PDF or image file';
      return false;
    }
    saving.value = true;
    try {
      await api.post(`${path.value}/documents`, documentFormData(form));
      Object.assign(form, blankDocument());
      return true;
    } catch (e) {
      if (e instanceof ApiError) setFrom(e);
      else throw e;
      return false;
    } finally {
      saving.value = false;
    }
  }
  return reactive({ form, saving, errors, formError, send });
}

export function useVariantDocuments(variantId: Ref<number>) {
  const documents = ref<DocumentView[]>([]);
  async function load() {
    documents.value = (await api.get<{ documents: DocumentView[] }>(`/variants/${variantId.value}/documents`)).documents;
  }
  watch(variantId, () => void load(), { immediate: true });
  return reactive({ documents, load });
}

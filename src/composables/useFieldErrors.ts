import { reactive, ref } from 'vue';
import type { z } from 'zod';
import { ApiError } from '@/api/client';

/**
 * Field errors for a form: from the shared zod schema before sending, and from
 * the server's { error: { fields } } after. Shown beside each field.
 */
export function useFieldErrors() {
  const errors = reactive<Record<string, string>>({});
  const formError = ref('');

  function clear() {
    for (const k of Object.keys(errors)) delete errors[k];
    formError.value = '';
  }

  function setFields(fields: Record<string, string>) {
    for (const [k, v] of Object.entries(fields)) errors[k] = v;
  }

  /** Shows an API error: field messages beside their fields, the rest above the form. */
  function setFrom(e: ApiError) {
    clear();
    setFields(e.fields);
    if (!Object.keys(e.fields).length || e.status !== 400) formError.value = e.message;
  }

  /** Validates with the shared schema; returns the parsed value or null (errors set). */
  function validate<S extends z.ZodType>(schema: S, value: unknown): z.infer<S> | null {
    const r = schema.safeParse(value);
    if (r.success) return r.data;
    clear();
    for (const issue of r.error.issues) {
      const key = issue.path.join('.') || '_';
      errors[key] ??= issue.message;
    }
    return null;
  }

  return { errors, formError, clear, setFields, setFrom, validate };
}

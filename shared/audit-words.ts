/**
 * The audit trail's vocabulary, one wording everywhere (the Audit trail page, its CSV, the PDF
 * report's audit summary): each action the app writes as one past-tense verb, and each kind of
 * record as a noun. Pure; no I/O.
 */

export const AUDIT_ACTIONS = [
  'create',
  'update',
  'delete',
  'void',
  'sign',
  'sign_failed',
  'submit',
  'sign_in',
  'lockout',
  'amend',
  'import',
  'migrate',
  'remeasure',
  'confirm',
  'close',
] as const;
export type AuditAction = (typeof AUDIT_ACTIONS)[number];

export const AUDIT_ACTION_LABELS: Readonly<Record<AuditAction, string>> = {
  create: 'Created',
  update: 'Changed',
  delete: 'Deleted',
  void: 'Voided',
  sign: 'Signed',
  sign_failed: 'Signature refused',
  submit: 'Submitted for review',
  sign_in: 'Signed in',
  lockout: 'Locked out',
  amend: 'Amended',
  import: 'Imported',
  migrate: 'Migrated',
  remeasure: 'Re-measured',
  confirm: 'Confirmed',
  close: 'Closed',
};

const ENTITY_LABELS: Readonly<Record<string, string>> = {
  observation: 'reading',
  photo: 'photo',
  study: 'study',
  checkpoint: 'checkpoint',
  decision: 'decision',
  storage_condition: 'storage condition',
  chamber_log: 'chamber log',
  user: 'member',
  invitation: 'invitation',
  lab: 'lab settings',
  attribute: 'attribute',
  batch: 'batch',
  product: 'product',
  variant: 'variant',
  ingredient: 'ingredient',
  formulas: 'formula catalogue',
  oos_investigation: 'out-of-specification investigation',
  risk_assessment: 'microbial-risk assessment',
  product_document: 'product-file document',
  photo_regions: 'photo colour regions',
  colour_card: 'reference card',
};

/** "Signature refused" for 'sign_failed'; an action outside the vocabulary in words. */
export function auditActionLabel(action: string): string {
  const known = (AUDIT_ACTION_LABELS as Record<string, string>)[action];
  if (known) return known;
  const words = action.replace(/_/g, ' ').trim();
  return words ? words.charAt(0).toUpperCase() + words.slice(1) : 'Recorded';
}

/** "reading" for 'observation', "storage condition" for 'storage_condition'. */
export function auditEntityLabel(entity: string): string {
  return ENTITY_LABELS[entity] ?? entity.replace(/_/g, ' ');
}

/** One kind of entry, as the report's audit summary counts them: "Created · reading". */
export function auditKindLabel(action: string, entity: string): string {
  return `${auditActionLabel(action)} · ${auditEntityLabel(entity)}`;
}

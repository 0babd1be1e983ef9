/**
 * Where the plan builder shows each error key (from the shared schema or the server's 400 fields):
 * beside its field, on its row, or, for keys no field shows, in the alert above the form.
 */

/** Error keys the builder shows beside a field; anything else goes in the alert above the form. */
const SHOWN = [
  /^(productId|title|startDate|samplesPerCell|containerDescription|fillGrams|responsibleId|notes)$/,
  /^responsibleIds(\.\d+)?$/,
  /^batchIds(\.\d+)?$/,
  /^conditions$/,
  /^conditions\.\d+\.(conditionId|role|template|pairControl|pairingOffReason)$/,
  /^conditions\.\d+\.offsets(\.\d+(\.(n|unit))?)?$/,
  /^attributes$/,
  /^attributes\.\d+\.(attributeId|criterion(\.(min|max|grade|level|kind))?)$/,
];

export type Errors = Record<string, string>;

export function otherErrors(errors: Errors): string[] {
  return Object.entries(errors)
    .filter(([k]) => !SHOWN.some((re) => re.test(k)))
    .map(([k, v]) => (k === '_' ? v : `${k}: ${v}`));
}

export function batchError(errors: Errors): string | undefined {
  return errors.batchIds ?? Object.entries(errors).find(([k]) => k.startsWith('batchIds.'))?.[1];
}

/** A condition's own errors not shown beside one of its fields. */
export function conditionRowError(errors: Errors, i: number): string | undefined {
  return errors[`conditions.${i}.conditionId`] ?? errors[`conditions.${i}.pairControl`];
}

export function attributeRowError(errors: Errors, i: number): string | undefined {
  return errors[`attributes.${i}.attributeId`];
}

/** What the plan still lacks, from the schema's issue paths, in words for the preview. */
export function missingFrom(paths: (string | number)[][]): string[] {
  const out = new Set<string>();
  for (const p of paths) {
    const top = String(p[0] ?? '');
    if (top === 'productId') out.add('a product (step 1)');
    else if (top === 'title') out.add('a title (step 1)');
    else if (top === 'startDate') out.add('a start date (step 1)');
    else if (top === 'batchIds') out.add('at least one batch (step 2)');
    else if (top === 'conditions' && p[2] === 'pairingOffReason') out.add('a reason for each condition read without a same-day control (step 3)');
    else if (top === 'conditions') out.add(p.length > 1 ? 'checkpoints that make sense for every condition (step 3)' : 'at least one storage condition (step 3)');
    else if (top === 'attributes') out.add(p.length > 1 ? 'acceptance criteria without mistakes (step 4)' : 'at least one attribute (step 4)');
    else out.add('the step 1 details filled in correctly');
  }
  return [...out];
}

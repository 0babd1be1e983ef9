/** Acceptance criteria and readings in words: the shared wording (shared/criterion-text.ts), as the client imports it. */
export { criterionText, formatDecimals, formatNumber, type CriterionSubject } from '@shared/criterion-text';

/**
 * How far a shelf life may reach beyond the real-time data, after the ICH Q1E
 * (2003) decision tree (Appendix A). Written from memory plus secondary copies
 * of the guideline, not from the guideline's text; simplified where noted.
 * X = months of real-time (long-term) data available.
 *
 * Room temperature:
 *  - no significant change at accelerated, and either little variability or
 *    data amenable to (and given) statistical analysis: up to 2X, not more than X + 12;
 *  - no significant change at accelerated, otherwise: up to 1.5X, not more than X + 6;
 *  - significant change at accelerated: "far less"; kept here to X + 3. (ICH Q1E
 *    allows 1.5X / X + 6 when intermediate data show no significant change and
 *    statistics are given, and no extrapolation when intermediate data change
 *    significantly; neither case is modelled.)
 * Refrigerated:
 *  - no significant change at accelerated, little variability or statistics: up
 *    to 1.5X, not more than X + 6;
 *  - no significant change at accelerated, neither: X + 3;
 *  - significant change at accelerated: no extrapolation (X).
 * Frozen: no extrapolation (X).
 */

export type StorageClass = 'room' | 'refrigerated' | 'frozen';

export interface ExtrapolationInput {
  /** X: months of real-time data available. */
  realTimeMonths: number;
  storage: StorageClass;
  /** A significant change (ICH Q1A sense) was seen at the accelerated condition. */
  acceleratedSignificantChange: boolean;
  /** Long-term and accelerated data show little change and little variability. */
  lowVariability: boolean;
  /** The long-term data are amenable to statistical analysis and it was done. */
  statisticsSupport: boolean;
}

export type ExtrapolationRuleId =
  | 'room_2x_12'
  | 'room_1_5x_6'
  | 'room_x_3'
  | 'refrigerated_1_5x_6'
  | 'refrigerated_x_3'
  | 'refrigerated_none'
  | 'frozen_none'
  | 'invalid';

export interface ExtrapolationCap {
  /** The longest shelf life the rule allows, months; null for invalid input. */
  capMonths: number | null;
  ruleId: ExtrapolationRuleId;
  /** A human sentence naming the rule. */
  rule: string;
}

/** The extrapolation limit for X months of real-time data (ICH Q1E, from memory). */
export function extrapolationCap(input: ExtrapolationInput): ExtrapolationCap {
  const X = input.realTimeMonths;
  if (!Number.isFinite(X) || X < 0) {
    return { capMonths: null, ruleId: 'invalid', rule: `Real-time data span must be a number of months of at least 0; got ${X}.` };
  }
  const amenable = input.lowVariability || input.statisticsSupport;
  const why = input.lowVariability
    ? 'little change and little variability'
    : input.statisticsSupport
      ? 'data amenable to statistics'
      : 'no statistical analysis and not low variability';
  switch (input.storage) {
    case 'room':
      if (input.acceleratedSignificantChange) {
        return {
          capMonths: X + 3,
          ruleId: 'room_x_3',
          rule: 'ICH Q1E: significant change at accelerated, so far less extrapolation: up to X + 3 months (simplified, from memory).',
        };
      }
      if (amenable) {
        return {
          capMonths: Math.min(2 * X, X + 12),
          ruleId: 'room_2x_12',
          rule: `ICH Q1E: no significant change at accelerated, ${why}: up to 2X but not more than X + 12 months.`,
        };
      }
      return {
        capMonths: Math.min(1.5 * X, X + 6),
        ruleId: 'room_1_5x_6',
        rule: `ICH Q1E: no significant change at accelerated, ${why}: up to 1.5X but not more than X + 6 months.`,
      };
    case 'refrigerated':
      if (input.acceleratedSignificantChange) {
        return {
          capMonths: X,
          ruleId: 'refrigerated_none',
          rule: 'ICH Q1E: refrigerated product with significant change at accelerated: no extrapolation beyond the real-time data.',
        };
      }
      if (amenable) {
        return {
          capMonths: Math.min(1.5 * X, X + 6),
          ruleId: 'refrigerated_1_5x_6',
          rule: `ICH Q1E: refrigerated product, no significant change at accelerated, ${why}: up to 1.5X but not more than X + 6 months.`,
        };
      }
      return {
        capMonths: X + 3,
        ruleId: 'refrigerated_x_3',
        rule: `ICH Q1E: refrigerated product, no significant change at accelerated, ${why}: up to X + 3 months.`,
      };
    case 'frozen':
      return {
        capMonths: X,
        ruleId: 'frozen_none',
        rule: 'ICH Q1E: frozen product: no extrapolation beyond the real-time data.',
      };
    default:
      return { capMonths: null, ruleId: 'invalid', rule: `Unknown storage class: ${String(input.storage)}.` };
  }
}

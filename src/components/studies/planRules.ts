/**
 * The plan builder's suggestions and small rules, without state: role and template per storage
 * condition, which templates fit a condition, the starter attributes and their criteria.
 */
import { type Criterion, defaultCriterion } from '@shared/compute/criteria';
import { SCHEDULE_TEMPLATES, type Offset } from '@shared/compute/schedule';
import { dayZeroAllowed, isDayZero } from '@shared/compute/study-calendar';
import type { ConditionRole } from '@shared/domain';
import type { Attribute } from '@shared/schemas/studies';
import type { OptionCondition, OptionTemplate } from '@/stores/studies';
import { sameOffset } from './format';

/** Attributes ticked on a new plan: the everyday checks of a cosmetic stability study. */
export const STARTER_CODES = ['appearance', 'color', 'colour', 'odor', 'odour', 'separation', 'texture', 'ph', 'viscosity'];

export const KIND_LABELS: Record<Attribute['kind'], string> = {
  measured: 'Measured',
  graded: 'Graded',
  compared: 'Compared with control',
  pass_fail: 'Pass / fail',
  note: 'Note',
};

/**
 * Suggested role and template for a condition (our choice; common practice, no published source):
 * cycling -> freeze-thaw, light -> 4-week light, mechanical -> centrifuge (each a stress test);
 * the lab's control (flagged on the condition) -> control on the 12-week schedule, so it is
 * checked beside the accelerated samples; constant at 37 °C or above -> 12-week accelerated;
 * any other constant condition -> 36-month real time.
 */
export function suggestFor(c: OptionCondition): { role: ConditionRole; template: string; why: string } {
  if (c.kind === 'cycling') return { role: 'stress', template: 'freeze-thaw-5', why: 'a cycling condition' };
  if (c.kind === 'light') return { role: 'stress', template: 'light-4w', why: 'a light condition' };
  if (c.kind === 'mechanical') return { role: 'stress', template: 'centrifuge', why: 'a mechanical test' };
  if (c.isControl) return { role: 'control', template: 'accelerated-12w', why: 'the lab’s control, checked beside the accelerated samples' };
  // Common practice, no published source: 37 °C and above is treated as accelerated, below as real time.
  if (c.setpointC != null && c.setpointC >= 37) return { role: 'accelerated', template: 'accelerated-12w', why: 'a condition at 37 °C or above (accelerated)' };
  return { role: 'real_time', template: 'real-time-36m', why: c.setpointC != null ? 'a condition below 37 °C (real time)' : 'a constant condition' };
}

/** The templates from the server, or the built-in ones when it sends none. */
export function templateList(fromServer: OptionTemplate[] | undefined): OptionTemplate[] {
  if (fromServer?.length) return fromServer;
  const roles: Record<string, ConditionRole> = {
    'accelerated-12w': 'accelerated',
    'freeze-thaw-5': 'stress',
    'real-time-36m': 'real_time',
    'light-4w': 'stress',
    centrifuge: 'stress',
  };
  return Object.values(SCHEDULE_TEMPLATES).map((t) => ({ id: t.id, label: t.label, offsets: t.offsets.map((o) => ({ ...o })), suggestedRole: roles[t.id] }));
}

/**
 * Templates that fit a condition: cycle offsets only for a cycling condition, a day 0 only for a
 * centrifuge test (every other condition starts from the study's initial test).
 */
export function templatesFor(templates: OptionTemplate[], c: OptionCondition | undefined): OptionTemplate[] {
  return templates.filter(
    (t) => (c?.kind === 'cycling' || !t.offsets.some((o) => o.unit === 'cycle')) && ((!!c && dayZeroAllowed(c.kind)) || !t.offsets.some(isDayZero)),
  );
}

/** A template's offsets for a condition, without a day 0 where the condition may not have one. */
export function templateOffsets(templates: OptionTemplate[], id: string | null, c: OptionCondition | undefined): Offset[] {
  const t = templates.find((x) => x.id === id);
  if (!t) return [];
  return t.offsets.filter((o) => (c && dayZeroAllowed(c.kind)) || !isDayZero(o)).map((o) => ({ ...o }));
}

export function templateEdited(templateOffsetList: Offset[], offsets: Offset[], template: string | null): boolean {
  const t = templateOffsetList;
  return !!template && (t.length !== offsets.length || t.some((o) => !offsets.some((x) => sameOffset(x, o))));
}

export function describeCondition(c: OptionCondition): string {
  const parts: string[] = [];
  if (c.kind === 'constant' && c.setpointC != null) parts.push(`${c.setpointC} °C${c.rhPercent != null ? ` / ${c.rhPercent} % RH` : ''}`);
  if (c.kind === 'cycling') parts.push(c.cycleHours ? `cycling, ${c.cycleHours} h per cycle` : 'cycling');
  if (c.kind === 'light') parts.push('light');
  if (c.kind === 'mechanical') parts.push('mechanical');
  if (c.location) parts.push(c.location);
  return parts.join(' · ');
}

export function initialCriterion(a: Attribute): Criterion {
  return { ...(a.defaultCriterion ?? defaultCriterion(a.code)) } as Criterion;
}

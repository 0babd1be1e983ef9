/** Storage conditions: validated input to table columns, and the columns other pages select. */
import { roundTo } from '../../shared/compute/units';
import { DEFAULT_RH_TOLERANCE } from '../../shared/compute/storage';
import type { ConditionValues } from '../../shared/schemas/storage';
import { storageConditions } from '../db/schema';

/** A condition as the sample and Record pages show it: name, place, and what its safety cautions need. */
export const conditionForCautions = {
  id: storageConditions.id,
  name: storageConditions.name,
  location: storageConditions.location,
  kind: storageConditions.kind,
  setpointC: storageConditions.setpointC,
  lowC: storageConditions.lowC,
  highC: storageConditions.highC,
  lightSource: storageConditions.lightSource,
};

const round2 = (x: number | null) => (x == null ? null : roundTo(x, 2));

/** Column values of a condition from validated input (other kinds' columns cleared). */
export function columnsOf(v: ConditionValues) {
  const cleared = {
    setpointC: null,
    rhPercent: null,
    toleranceC: null,
    toleranceRh: null,
    lowC: null,
    highC: null,
    hoursLow: null,
    hoursHigh: null,
    lightSource: null,
    rpm: null,
    minutes: null,
    radiusCm: null,
  };
  const common = {
    name: v.name,
    kind: v.kind,
    location: v.location,
    isControl: v.isControl,
    inUse: v.inUse,
    preset: v.preset ?? null,
    notes: v.notes ?? null,
  };
  switch (v.kind) {
    case 'constant':
      return {
        ...common,
        ...cleared,
        setpointC: round2(v.setpointC),
        rhPercent: round2(v.rhPercent ?? null),
        toleranceC: round2(v.toleranceC),
        toleranceRh: v.rhPercent == null ? null : round2(v.toleranceRh ?? DEFAULT_RH_TOLERANCE),
      };
    case 'cycling':
      return { ...common, ...cleared, lowC: round2(v.lowC), highC: round2(v.highC), hoursLow: round2(v.hoursLow), hoursHigh: round2(v.hoursHigh) };
    case 'light':
      return { ...common, ...cleared, lightSource: v.lightSource };
    case 'mechanical':
      return { ...common, ...cleared, rpm: v.rpm, minutes: round2(v.minutes), radiusCm: round2(v.radiusCm) };
  }
}


import { describe, expect, it } from 'vitest';
import { conditionInput } from '../../shared/schemas/storage';
import { DEEP_COLD_C, HOT_CAUTION_C, PRESET_KEYS, SAFETY_RULES, STORAGE_PRESETS, cautionLines, conditionCautions, presetByKey } from '../../shared/storage-presets';
import { demoOvenReadings, mulberry32 } from '../../server/demo/storage';
import { summarizeChamberLog } from '../../shared/compute/storage';

describe('storage presets', () => {
  it('give the ICH Q1A(R2) general-case storage conditions', () => {
    // ICH Q1A(R2) (2003), section 2.1.7.1 "General case", table of study / storage condition:
    //   long term     25 °C ± 2 °C / 60 % RH ± 5 % RH  or  30 °C ± 2 °C / 65 % RH ± 5 % RH
    //   intermediate  30 °C ± 2 °C / 65 % RH ± 5 % RH
    //   accelerated   40 °C ± 2 °C / 75 % RH ± 5 % RH
    const ich = (key: string) => presetByKey(key)!;
    expect(ich('ich-25-60').input).toMatchObject({ kind: 'constant', setpointC: 25, toleranceC: 2, rhPercent: 60, toleranceRh: 5 });
    expect(ich('ich-30-65').input).toMatchObject({ kind: 'constant', setpointC: 30, toleranceC: 2, rhPercent: 65, toleranceRh: 5 });
    expect(ich('ich-40-75').input).toMatchObject({ kind: 'constant', setpointC: 40, toleranceC: 2, rhPercent: 75, toleranceRh: 5 });
    for (const key of ['ich-25-60', 'ich-30-65', 'ich-40-75']) {
      expect(ich(key).source).toBe('ich');
      expect(ich(key).sourceNote).toMatch(/ICH Q1A\(R2\), section 2\.1\.7\.1/);
    }
    expect(ich('ich-25-60').label).toMatch(/ICH long term/);
    expect(ich('ich-30-65').label).toMatch(/ICH intermediate/);
    expect(ich('ich-40-75').label).toMatch(/ICH accelerated/);
  });

  it('say "common practice" on every other preset', () => {
    const others = STORAGE_PRESETS.filter((p) => p.source !== 'ich');
    expect(others.map((p) => p.key).sort()).toEqual(['centrifuge-3000', 'freeze-thaw', 'fridge-4', 'in-use', 'oven-45', 'oven-50', 'room', 'window-daylight']);
    for (const p of others) expect(p.sourceNote).toMatch(/Common practice.*no published source/);
    // Common practice, no published source: freeze-thaw -10 °C / 25 °C, 24 h each; centrifuge 3000 rpm 30 min.
    expect(presetByKey('freeze-thaw')!.input).toMatchObject({ kind: 'cycling', lowC: -10, highC: 25, hoursLow: 24, hoursHigh: 24 });
    expect(presetByKey('centrifuge-3000')!.input).toMatchObject({ kind: 'mechanical', rpm: 3000, minutes: 30 });
    expect(presetByKey('fridge-4')!.input).toMatchObject({ setpointC: 4, isControl: true });
    // Room temperature: a shelf in the lab, 22 °C ± 3 °C (common practice; no heat or cold caution).
    expect(presetByKey('room')!.input).toMatchObject({ kind: 'constant', setpointC: 22, toleranceC: 3 });
    expect(conditionCautions(presetByKey('room')!.input as never)).toEqual([]);
    // In use: opened daily at room temperature (common practice); marked in use so its results feed the period after opening.
    expect(presetByKey('in-use')!.input).toMatchObject({ kind: 'constant', setpointC: 22, toleranceC: 3, inUse: true });
  });

  it('are all valid condition inputs with unique keys', () => {
    expect(STORAGE_PRESETS.map((p) => p.key)).toEqual([...PRESET_KEYS]);
    for (const p of STORAGE_PRESETS) expect(conditionInput.safeParse(p.input).success, p.key).toBe(true);
  });
});

describe('safety cautions', () => {
  // Thresholds are common practice, no published source: gloves for ovens from 45 °C (a 40 °C cabinet is
  // warm, not hot); frozen surfaces at 0 °C and below; cryogenic gloves and dry ice at -40 °C and below.
  it('warn of hot ovens from 45 °C, of frozen surfaces at 0 °C and below, of dry ice only at -40 °C and below, of UV and centrifuges', () => {
    expect(HOT_CAUTION_C).toBe(45);
    expect(DEEP_COLD_C).toBe(-40);
    expect(conditionCautions({ kind: 'constant', setpointC: 39 })).toEqual([]);
    // A 40 °C / 75 % RH climate cabinet: no heat gloves.
    expect(conditionCautions({ kind: 'constant', setpointC: 40 })).toEqual([]);
    expect(conditionCautions({ kind: 'constant', setpointC: 44 })).toEqual([]);
    expect(conditionCautions({ kind: 'constant', setpointC: 4 })).toEqual([]);
    const hot = conditionCautions({ kind: 'constant', setpointC: 45 });
    expect(hot.map((c) => c.key)).toEqual(['hot']);
    expect(hot[0].text).toMatch(/heat-resistant gloves/);
    expect(hot[0].text).toMatch(/cool/);
    // A -10 °C freezer (freeze-thaw): frozen surfaces, no dry ice.
    const ft = conditionCautions({ kind: 'cycling', lowC: -10, highC: 25 });
    expect(ft.map((c) => c.key)).toEqual(['cold']);
    expect(ft[0].text).toMatch(/dry gloves/);
    expect(ft[0].text).not.toMatch(/dry ice/i);
    expect(conditionCautions({ kind: 'constant', setpointC: 0 }).map((c) => c.key)).toEqual(['cold']);
    expect(conditionCautions({ kind: 'constant', setpointC: -20 }).map((c) => c.key)).toEqual(['cold']);
    // A -80 °C freezer: cryogenic gloves, and dry ice with its ventilation rule.
    const deep = conditionCautions({ kind: 'constant', setpointC: -80 });
    expect(deep.map((c) => c.key)).toEqual(['deep_cold']);
    expect(deep[0].text).toMatch(/cryogenic gloves/);
    expect(deep[0].text).toMatch(/ventilation/);
    expect(deep[0].text).toMatch(/never in a sealed container/);
    expect(conditionCautions({ kind: 'cycling', lowC: -40, highC: 25 }).map((c) => c.key)).toEqual(['deep_cold']);
    expect(conditionCautions({ kind: 'cycling', lowC: -10, highC: 45 }).map((c) => c.key)).toEqual(['hot', 'cold']);
    expect(conditionCautions({ kind: 'light', lightSource: 'daylight' })).toEqual([]);
    const uv = conditionCautions({ kind: 'light', lightSource: 'uv_cabinet' });
    expect(uv.map((c) => c.key)).toEqual(['uv']);
    expect(uv[0].text).toMatch(/eye protection/);
    const spin = conditionCautions({ kind: 'mechanical' });
    expect(spin.map((c) => c.key)).toEqual(['centrifuge']);
    expect(spin[0].text).toMatch(/balance the rotor.*stopped/i);
  });

  it('as lines for several conditions: each caution once, then the local-rules line; nothing when none apply', () => {
    expect(SAFETY_RULES).toMatch(/local regulations/);
    const lines = cautionLines([
      { kind: 'constant', setpointC: 4 },
      { kind: 'constant', setpointC: 45 },
      { kind: 'constant', setpointC: 50 },
      { kind: 'mechanical' },
    ]);
    expect(lines).toHaveLength(3);
    expect(lines[0]).toMatch(/heat-resistant gloves/);
    expect(lines[1]).toMatch(/rotor/);
    expect(lines[2]).toBe(SAFETY_RULES);
    expect(cautionLines([{ kind: 'constant', setpointC: 25 }])).toEqual([]);
  });
});

describe('demo oven log', () => {
  it('is deterministic, about 45 °C, with one short excursion', () => {
    const end = Date.UTC(2026, 5, 1);
    const a = demoOvenReadings(end);
    const b = demoOvenReadings(end);
    expect(a).toEqual(b);
    expect(a).toHaveLength(30 * 288);
    const s = summarizeChamberLog(a, { setpointC: 45 });
    expect(s.excursions).toHaveLength(1);
    // Three readings 5 minutes apart are below 43 °C: 15 minutes out (invented data).
    expect(s.hoursOutOfTolerance).toBeCloseTo(0.25, 9);
    expect(s.minC).toBe(41.9);
    expect(s.mktC!).toBeGreaterThan(44.8);
    expect(s.mktC!).toBeLessThan(45.2);
    const r = mulberry32(1);
    const first = [r(), r(), r()];
    const r2 = mulberry32(1);
    expect([r2(), r2(), r2()]).toEqual(first);
  });
});

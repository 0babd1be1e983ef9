/**
 * Microbial-risk factors, each at, just below and just above its threshold.
 * Source of every threshold: ISO 29621 as summarised publicly by testing laboratories (not the
 * standard's own text, which we did not have); the pack factor from memory.
 */
import { describe, expect, it } from 'vitest';
import {
  alcoholMet,
  aluminiumChlorohydrateMet,
  anhydrousMet,
  assessRisk,
  changedFactors,
  fillingTempMet,
  formulaShares,
  phAcidMet,
  phAlkalineMet,
  protectivePack,
  waterActivityMet,
  type RiskInputs,
} from '../../shared/compute/microbial-risk';

const none: RiskInputs = {
  waterPercent: 70,
  alcoholPercent: 0,
  aluminiumChlorohydratePercent: 0,
  ph: 5.5,
  waterActivity: 0.98,
  fillingTempC: 40,
  solventBased: false,
  oxidising: false,
  pack: 'open_jar',
};

describe('each factor at, just below and just above its threshold (ISO 29621, public summary)', () => {
  it('acid pH: at most 3', () => {
    expect([phAcidMet(2.99), phAcidMet(3.0), phAcidMet(3.01)]).toEqual([true, true, false]);
  });
  it('alkaline pH: at least 10', () => {
    expect([phAlkalineMet(9.99), phAlkalineMet(10.0), phAlkalineMet(10.01)]).toEqual([false, true, true]);
  });
  it('water activity: below 0.75', () => {
    expect([waterActivityMet(0.74), waterActivityMet(0.75), waterActivityMet(0.76)]).toEqual([true, false, false]);
  });
  it('alcohol: above 20 % w/w', () => {
    expect([alcoholMet(19.9), alcoholMet(20), alcoholMet(20.1)]).toEqual([false, false, true]);
  });
  it('filling temperature: above 65 °C', () => {
    expect([fillingTempMet(64.9), fillingTempMet(65), fillingTempMet(65.1)]).toEqual([false, false, true]);
  });
  it('aluminium chlorohydrate: above 25 % w/w', () => {
    expect([aluminiumChlorohydrateMet(24.9), aluminiumChlorohydrateMet(25), aluminiumChlorohydrateMet(25.1)]).toEqual([false, false, true]);
  });
  it('anhydrous: no water at all (0 % w/w); 0.01 % of water is not anhydrous', () => {
    expect([anhydrousMet(0), anhydrousMet(0.01)]).toEqual([true, false]);
  });
  it('pack (from memory): anything but an open jar protects', () => {
    expect([protectivePack('open_jar'), protectivePack('airless_pump'), protectivePack('single_use'), protectivePack('narrow_orifice')]).toEqual([false, true, true, true]);
  });
});

describe('the outcome', () => {
  it('an emulsion at pH 5.5 in a jar is not low risk and expects an ISO 11930 test', () => {
    const o = assessRisk(none);
    expect(o.lowRisk).toBe(false);
    expect(o.text).toMatch(/^Not low risk: a preservative efficacy test to ISO 11930 is expected/);
    expect(o.caution).toMatch(/not a decision/);
  });
  it('an anhydrous balm is low risk by anhydrous', () => {
    const o = assessRisk({ ...none, waterPercent: 0, waterActivity: null, ph: null });
    expect(o.lowRisk).toBe(true);
    expect(o.text).toMatch(/^Low risk by anhydrous: a challenge test is usually not needed/);
  });
  it('names every factor that makes it low risk', () => {
    const o = assessRisk({ ...none, ph: 2.5, waterActivity: 0.6 });
    expect(o.text).toMatch(/^Low risk by acid ph and water activity/);
  });
  it('hot filling and an airless pump alone do not make it low risk', () => {
    const o = assessRisk({ ...none, fillingTempC: 80, pack: 'airless_pump' });
    expect(o.lowRisk).toBe(false);
    expect(o.factors.find((f) => f.key === 'filling_temperature')?.met).toBe(true);
  });
  it('an unknown value is neither met nor not met', () => {
    const o = assessRisk({ ...none, ph: null });
    expect(o.factors.find((f) => f.key === 'ph_acid')?.met).toBeNull();
  });
});

describe('shares from the formula lines (INCI names)', () => {
  it('counts Aqua and "Aqua (and) ..." as water, Alcohol Denat. as alcohol, never Cetyl Alcohol', () => {
    const s = formulaShares([
      { inciName: 'Aqua', percent: 60 },
      { inciName: 'Aqua (and) Citric Acid', percent: 0.2 },
      { inciName: 'Alcohol Denat.', percent: 25 },
      { inciName: 'Cetyl Alcohol', percent: 2 },
      { inciName: 'Aluminum Chlorohydrate', percent: 12.8 },
    ]);
    expect(s).toEqual({ waterPercent: 60.2, alcoholPercent: 25, aluminiumChlorohydratePercent: 12.8 });
  });
  it('a formula change that adds water or cuts alcohol is a changed factor', () => {
    const before = { ...none, waterPercent: 0, alcoholPercent: 30 };
    expect(changedFactors(before, { ...before, waterPercent: 5 })).toEqual(['waterPercent']);
    expect(changedFactors(before, { ...before, alcoholPercent: 15 })).toEqual(['alcoholPercent']);
    expect(changedFactors(before, { ...before })).toEqual([]);
  });
});

// @vitest-environment happy-dom
/**
 * The review screens' client pieces: the CSV reader behind the printable report, the signature
 * formatters, SubmitForm (starts from the suggestion, asks why while checkpoints are open, sends
 * the shared schema's body) and DecisionForm (label dating computed live with the shared
 * labelDating(): best-before at 30 months or less, period after opening above, per EU Regulation
 * 1223/2009 Art. 19(1)(c); ready phrases; the password error beside its field) and VariantEvidence
 * (a condition without results says so, not "no failures").
 * The server is stubbed here; its own behaviour is covered by tests/api/reviews.test.ts.
 */
import { afterEach, beforeEach, describe, expect, it, vi } from 'vitest';
import { config, flushPromises, mount, RouterLinkStub } from '@vue/test-utils';
import { createPinia, setActivePinia } from 'pinia';
import type { StudyDetail } from '../../shared/schemas/studies';
import DecisionForm from '../../src/components/review/DecisionForm.vue';
import SubmitForm from '../../src/components/review/SubmitForm.vue';
import VariantEvidence from '../../src/components/review/VariantEvidence.vue';
import { hashGroups, months, parseCsv, signedTimeText, utcText, type ReviewAnalysis } from '../../src/components/review/review';
import { useSessionStore } from '../../src/stores/session';

const MOUNT_TIMEOUT = 20_000;
// Real transitions, so Element Plus renders its field messages (it shows them after a 100 ms debounce).
config.global.stubs = { transition: false, 'transition-group': false };
const settle = async () => {
  await flushPromises();
  await new Promise((r) => setTimeout(r, 150));
  await flushPromises();
};

describe('review formatters', () => {
  it('reads the observations CSV: quoted cells, doubled quotes, CRLF, a formula-guarded cell', () => {
    const csv = 'sample,value,verdict\r\nAB12CD,"5,4",pass\r\nAB12CD,"said ""no change""",pass\r\nEF34GH,"\'-10",fail\r\n';
    expect(parseCsv(csv)).toEqual([
      { sample: 'AB12CD', value: '5,4', verdict: 'pass' },
      { sample: 'AB12CD', value: 'said "no change"', verdict: 'pass' },
      { sample: 'EF34GH', value: "'-10", verdict: 'fail' },
    ]);
    expect(parseCsv('')).toEqual([]);
  });

  it('writes signature times in UTC, hashes in groups of 8, months with their unit', () => {
    expect(utcText('2026-12-14T09:30:12.345Z')).toBe('2026-12-14 09:30:12 UTC');
    // In lab time like every other time, with the UTC record beside it (Berlin is UTC+1 in December, IANA tz database).
    expect(signedTimeText('2026-12-14T09:30:12.345Z', { timeZone: 'Europe/Berlin', dateFormat: 'YYYY-MM-DD' })).toBe('2026-12-14 10:30 Europe/Berlin (2026-12-14 09:30:12 UTC)');
    expect(signedTimeText('2026-12-14T09:30:12.345Z', { timeZone: 'UTC' })).toBe('2026-12-14 09:30:12 UTC');
    expect(hashGroups('a'.repeat(64)).split(' ')).toHaveLength(8);
    expect(months(1)).toBe('1 month');
    expect(months(24)).toBe('24 months');
    expect(months(null)).toBe('—');
  });
});

const json = (body: unknown, status = 200) => new Response(JSON.stringify(body), { status, headers: { 'Content-Type': 'application/json' } });

const study = {
  id: 5,
  title: 'Test study',
  status: 'running',
  startDate: '2026-09-01',
  batches: [
    { id: 11, lotCode: 'L-A', madeOn: '2026-08-20', packaging: 'jar', variant: { id: 101, code: 'A', name: 'Variant A' } },
    { id: 12, lotCode: 'L-B', madeOn: '2026-08-25', packaging: 'jar', variant: { id: 102, code: 'B', name: 'Variant B' } },
  ],
  conditions: [{ id: 21, conditionId: 1, name: '25 °C', kind: 'constant', location: '', isControl: false, setpointC: 25, cycleHours: null, role: 'real_time', template: null, offsets: [], endedOn: null, endedReason: null }],
  checkpoints: [
    { id: 31, studyConditionId: 21, label: 'Day 0', offset: { unit: 'day', n: 0 }, dueDate: '2026-09-01', status: 'done' },
    { id: 32, studyConditionId: 21, label: 'Month 3', offset: { unit: 'month', n: 3 }, dueDate: '2026-12-01', status: 'open' },
  ],
} as unknown as StudyDetail;

describe('SubmitForm', () => {
  let calls: { url: string; method: string; body: unknown }[] = [];
  let submitAnswer: () => Response;

  beforeEach(() => {
    setActivePinia(createPinia());
    useSessionStore().user = { id: 2, name: 'Theo Okafor', email: 't@x', role: 'formulator', lab: { id: 1, name: 'Lab', timeZone: 'UTC', dateFormat: 'YYYY-MM-DD' } };
    calls = [];
    submitAnswer = () => json({ review: { variants: [], submission: null, submissions: [], decisions: [], current: [], dataHash: 'x' } });
    vi.stubGlobal(
      'fetch',
      vi.fn(async (url: string, init?: RequestInit) => {
        calls.push({ url, method: init?.method ?? 'GET', body: init?.body ? JSON.parse(String(init.body)) : undefined });
        if (url === '/api/studies/5') return json({ study });
        if (url === '/api/studies/5/analysis') {
          return json({ analysis: { suggestions: [{ variantId: 101, result: { months: 11, basis: 'real_time', blocked: false } }, { variantId: 102, result: { months: null, basis: 'none', blocked: false } }] } });
        }
        if (url === '/api/studies/5/submit') return submitAnswer();
        return json({ error: { code: 'not_found', message: 'no' } }, 404);
      }),
    );
  });
  afterEach(() => vi.unstubAllGlobals());

  it('starts from the suggestion, asks why while checkpoints are open, and sends the shared schema body', async () => {
    const w = mount(SubmitForm, { props: { studyId: 5 }, attachTo: document.body });
    await flushPromises();
    const a = w.find('[data-testid="proposal-A"]');
    expect(a.text()).toContain('Suggested 11 months (from real-time data)');
    expect((w.find('[data-testid="proposal-A-shelf-life"] input').element as HTMLInputElement).value).toBe('11');
    expect((w.find('[data-testid="proposal-B-shelf-life"] input').element as HTMLInputElement).value).toBe('');
    expect(w.find('[data-testid="submit-open-reason"]').exists()).toBe(true);
    expect(w.text()).toContain('1 checkpoint is still open');

    await w.find('[data-testid="submit-summary"]').setValue('A held; B has no figure yet.');
    await w.find('form').trigger('submit');
    await settle();
    expect(calls.some((c) => c.method === 'POST')).toBe(false);
    expect(w.text()).toContain('1 checkpoint is still open: give a reason to end early');

    await w.find('[data-testid="submit-open-reason"]').setValue('The formula changes');
    expect(w.text()).not.toContain('give a reason to end early'); // cleared as soon as the reason is typed
    await w.find('form').trigger('submit');
    await flushPromises();
    const post = calls.find((c) => c.method === 'POST');
    expect(post?.url).toBe('/api/studies/5/submit');
    expect(post?.body).toEqual({
      summary: 'A held; B has no figure yet.',
      proposals: [
        { variantId: 101, shelfLifeMonths: 11, paoMonths: null },
        { variantId: 102, shelfLifeMonths: null, paoMonths: null },
      ],
      openCheckpointsReason: 'The formula changes',
    });
    expect(w.emitted('submitted')).toHaveLength(1);
    w.unmount();
  }, MOUNT_TIMEOUT);

  it("shows the server's field error beside its field", async () => {
    submitAnswer = () => json({ error: { code: 'validation', message: 'Invalid input', fields: { 'proposals.0.shelfLifeMonths': 'The shelf life cannot exceed 120 months' } } }, 400);
    const w = mount(SubmitForm, { props: { studyId: 5 }, attachTo: document.body });
    await flushPromises();
    await w.find('[data-testid="submit-summary"]').setValue('A held; B has no figure yet.');
    await w.find('[data-testid="submit-open-reason"]').setValue('The formula changes');
    await w.find('form').trigger('submit');
    await settle();
    expect(w.find('[data-testid="proposal-A"] .el-form-item__error').text()).toBe('The shelf life cannot exceed 120 months');
    w.unmount();
  }, MOUNT_TIMEOUT);
});

describe('DecisionForm', () => {
  let signAnswer: () => Response;
  let posted: Record<string, unknown> | null;

  beforeEach(() => {
    setActivePinia(createPinia());
    useSessionStore().user = { id: 1, name: 'Maya Lindqvist', email: 'm@x', role: 'owner', lab: { id: 1, name: 'Lab', timeZone: 'UTC', dateFormat: 'YYYY-MM-DD' } };
    posted = null;
    signAnswer = () => json({ error: { code: 'forbidden', message: 'The password is wrong: the decision was not signed', fields: { password: 'Wrong password' } } }, 403);
    vi.stubGlobal(
      'fetch',
      vi.fn(async (_url: string, init?: RequestInit) => {
        posted = JSON.parse(String(init?.body));
        return signAnswer();
      }),
    );
  });
  afterEach(() => {
    vi.unstubAllGlobals();
    document.body.innerHTML = '';
  });

  const props = {
    studyId: 5,
    variant: { id: 101, code: 'A', name: 'Variant A' },
    conditions: study.conditions,
    checkpoints: study.checkpoints,
    startDate: study.startDate,
    madeOn: '2026-08-20',
    proposal: { shelfLifeMonths: 30, paoMonths: 12 },
  };

  it('computes the label dating live: best-before at 30 months, period after opening at 31', async () => {
    const w = mount(DecisionForm, { props, attachTo: document.body });
    await w.find('[data-testid="decision-A-outcome-released"] input').setValue(true);
    await flushPromises();
    const dating = () => w.find('[data-testid="decision-A-label-dating"]').text();
    // EU Regulation 1223/2009 Art. 19(1)(c): 30 months or less -> a best-before date; made 2026-08-20 + 30 months = 2029-02-20.
    expect(dating()).toContain('Best-before date on the pack');
    expect(dating()).toContain('2029-02');
    expect(dating()).toContain("regulatory adviser has the last word");
    const input = w.find('[data-testid="decision-A-shelf-life"] input');
    await input.setValue('31');
    await input.trigger('change');
    await flushPromises();
    expect(dating()).toContain('Period after opening on the pack');
    expect(dating()).toContain('12M');
    w.unmount();
  }, MOUNT_TIMEOUT);

  it('a shelf life longer than suggested: a caution beside it, and the comment is required before signing', async () => {
    const w = mount(DecisionForm, { props: { ...props, suggestedMonths: 12 }, attachTo: document.body });
    await w.find('[data-testid="decision-A-outcome-released"] input').setValue(true);
    await flushPromises();
    expect(w.find('[data-testid="decision-A-longer-caution"]').text()).toBe('Longer than the data suggest (12 months): say why in the comment');
    await w.find('[data-testid="decision-A-sign"]').trigger('click');
    await settle();
    expect(w.findAll('.el-form-item__error').map((e) => e.text())).toEqual(['Longer than the data suggest (12 months): say why in the comment']);
    expect(document.body.querySelector('[data-testid="sign-dialog-body"]')).toBeNull();
    expect(posted).toBeNull();
    // As suggested: no caution, no comment needed.
    const input = w.find('[data-testid="decision-A-shelf-life"] input');
    await input.setValue('12');
    await input.trigger('change');
    await flushPromises();
    expect(w.find('[data-testid="decision-A-longer-caution"]').exists()).toBe(false);
    w.unmount();
  }, MOUNT_TIMEOUT);

  it('flags a best-before date that has already passed', async () => {
    const w = mount(DecisionForm, { props: { ...props, madeOn: '2020-01-15', proposal: { shelfLifeMonths: 12, paoMonths: null } }, attachTo: document.body });
    await w.find('[data-testid="decision-A-outcome-released"] input').setValue(true);
    await flushPromises();
    expect(w.find('[data-testid="decision-A-best-before-flag"]').text()).toContain('The best-before date of the earliest lot (2021-01-15) has already passed.');
    w.unmount();
  }, MOUNT_TIMEOUT);

  it('adds and removes ready phrases with a click', async () => {
    const w = mount(DecisionForm, { props, attachTo: document.body });
    await w.find('[data-testid="decision-A-outcome-released_with_conditions"] input').setValue(true);
    await flushPromises();
    const phrases = w.findAll('[data-testid="decision-A-phrase"]');
    expect(phrases.map((p) => p.text())).toEqual(['Protect from freezing.', 'Store below 25 °C.', 'Keep away from sunlight.']);
    await phrases[2].trigger('click');
    await phrases[0].trigger('click');
    const text = () => (w.find('[data-testid="decision-A-conditions"]').element as HTMLTextAreaElement).value;
    expect(text()).toBe('Keep away from sunlight. Protect from freezing.');
    expect(phrases[0].attributes('aria-pressed')).toBe('true');
    await phrases[2].trigger('click');
    expect(text()).toBe('Protect from freezing.');
    w.unmount();
  }, MOUNT_TIMEOUT);

  it('says what the signature means and shows a wrong password beside the field', async () => {
    const w = mount(DecisionForm, { props, attachTo: document.body });
    await w.find('[data-testid="decision-A-outcome-not_released"] input').setValue(true);
    // Not released needs a comment saying why: the label drops "(optional)".
    await w.find('[data-testid="decision-A-sign"]').trigger('click');
    await settle();
    expect(document.body.querySelector('[data-testid="sign-dialog-body"]')).toBeNull();
    expect(w.text()).toContain('Say why the variant is not released');
    expect(w.text()).not.toContain('Comment (optional)');
    await w.find('[data-testid="decision-A-comment"]').setValue('Separates at 45 °C.');
    await w.find('[data-testid="decision-A-sign"]').trigger('click');
    await flushPromises();
    const body = () => document.body.querySelector('[data-testid="sign-dialog-body"]');
    expect(body()?.textContent).toContain('Your signature means: rejected.');
    const pw = document.body.querySelector('[data-testid="sign-password"]') as HTMLInputElement;
    pw.value = 'wrong';
    pw.dispatchEvent(new Event('input'));
    (document.body.querySelector('[data-testid="sign-confirm"]') as HTMLButtonElement).click();
    await settle();
    expect(posted).toMatchObject({ variantId: 101, outcome: 'not_released', comment: 'Separates at 45 °C.', password: 'wrong' });
    expect(posted).not.toHaveProperty('shelfLifeMonths');
    expect(body()?.querySelector('.el-form-item__error')?.textContent?.trim()).toBe('Wrong password');
    expect(w.emitted('signed')).toBeUndefined();
    w.unmount();
  }, MOUNT_TIMEOUT);
});

describe('VariantEvidence', () => {
  it('says "no results yet" for a condition without readings after the initial test, "no failures" only for one with them', () => {
    const freezeThaw = { ...study.conditions[0], id: 22, name: 'Freeze-thaw', kind: 'cycling', role: 'stress' };
    const ff = (studyConditionId: number, dataPoints: number) => ({ variantId: 101, studyConditionId, label: null, months: null, attributes: [], dataPoints });
    const w = mount(VariantEvidence, {
      props: {
        studyId: 5,
        variant: { id: 101, code: 'A', name: 'Variant A' },
        study: { ...study, conditions: [...study.conditions, freezeThaw], samples: [] } as unknown as StudyDetail,
        analysis: { suggestions: [], firstFailures: [ff(21, 12), ff(22, 0)] } as unknown as ReviewAnalysis,
        photos: [],
        proposal: null,
      },
      global: { stubs: { RouterLink: RouterLinkStub } },
    });
    expect(w.findAll('[data-testid="failures"] li').map((li) => li.text())).toEqual(['25 °C: no failures', 'Freeze-thaw: no results yet']);
    w.unmount();
  });
});

/**
 * Review and release: a formulator submits a study (observations lock), the
 * owner decides per variant and signs with their password. A signature records
 * the signer's name, the UTC time, its meaning and a SHA-256 of the study data it
 * covers; a decision is never edited, only superseded with a reason.
 */
import { createHash } from 'node:crypto';
import bcrypt from 'bcryptjs';
import { and, asc, desc, eq, inArray, sql } from 'drizzle-orm';
import { labelDating } from '../../shared/compute/label';
import { generateSchedule } from '../../shared/compute/schedule';
import { SIGNATURE_MEANINGS } from '../../shared/domain';
import {
  longerThanSuggested,
  openCheckpointsProblem,
  openCheckpointsText,
  type DecidedStudyItem,
  type DecisionInput,
  type DecisionView,
  type ReviewQueueItem,
  type SubmissionView,
  type SubmitInput,
} from '../../shared/schemas/reviews';
import { claimAttempt, LOCKOUT, lockedError, passwordAccepted } from '../auth/lockout';
import type { Db, DbOrTx } from '../db/client';
import {
  amendments,
  batches,
  checkpoints,
  decisions,
  labs,
  observations,
  products,
  storageConditions,
  studies,
  studyBatches,
  studyConditions,
  submissions,
  users,
  variants,
} from '../db/schema';
import { conflict, forbidden, HttpError, notFound } from '../http/errors';
import type { Logger } from '../log';
import { analyzeStudy } from './analysis';
import { audit } from './audit';
import { cycleHoursOf, planOf, todayIn } from './studies';
import { investigationsOf } from './oos';
import { missingChallengeTest, signedDocuments } from './product-file/expected';
import { pairedControlFor } from './study/amend';

const bad = (fields: Record<string, string>) => new HttpError(400, 'validation', `Invalid input: check ${Object.keys(fields).join(', ')}`, fields);

/** SHA-256 over the study's plan, checkpoints and every observation version (voided ones too), in a fixed order. */
export async function studyDataHash(db: DbOrTx, labId: number, studyId: number): Promise<string> {
  const full = await planOf(db, studyId);
  // Pairing settings at their defaults are left out, so signatures made before pairing existed still match.
  const plan = {
    ...full,
    conditions: full.conditions.map(({ pairControl, pairingOffReason, ...c }) => (pairControl && !pairingOffReason ? c : { ...c, pairControl, pairingOffReason })),
  };
  const cps = await db
    .select({ id: checkpoints.id, status: checkpoints.status, dueDate: checkpoints.dueDate, label: checkpoints.label })
    .from(checkpoints)
    // Open checkpoints hold no data yet: adding one (e.g. "continue testing" for another variant) does not change what a signature covers.
    .where(and(eq(checkpoints.studyId, studyId), sql`${checkpoints.status} <> 'open'`))
    .orderBy(asc(checkpoints.id));
  const obs = await db
    .select({
      id: observations.id,
      s: observations.sampleId,
      c: observations.checkpointId,
      a: observations.studyAttributeId,
      n: observations.valueNum,
      t: observations.valueText,
      b: observations.valueBool,
      m: observations.method,
      v: observations.verdict,
      r: observations.notDoneReason,
      ver: observations.version,
      x: observations.voided,
    })
    .from(observations)
    // lab_id first: the (lab_id, study_id) index serves it; study_id alone would scan every lab's readings.
    .where(and(eq(observations.labId, labId), eq(observations.studyId, studyId)))
    .orderBy(asc(observations.id));
  return createHash('sha256').update(JSON.stringify({ plan, checkpoints: cps, observations: obs })).digest('hex');
}

async function studyVariants(db: DbOrTx, studyId: number) {
  return db
    .selectDistinct({ id: variants.id, code: variants.code, name: variants.name })
    .from(studyBatches)
    .innerJoin(batches, eq(batches.id, studyBatches.batchId))
    .innerJoin(variants, eq(variants.id, batches.variantId))
    .where(eq(studyBatches.studyId, studyId))
    .orderBy(asc(variants.code));
}

export async function submitStudy(db: Db, who: { id: number; labId: number }, studyId: number, input: SubmitInput): Promise<void> {
  await db.transaction(async (tx) => {
    const [study] = await tx
      .select()
      .from(studies)
      .where(and(eq(studies.labId, who.labId), eq(studies.id, studyId)))
      .for('update');
    if (!study) throw notFound('No such study in your lab');
    if (study.status !== 'running') throw conflict(`Only a running study can be submitted; this one is ${study.status.replace('_', ' ')}`);
    const vs = await studyVariants(tx, studyId);
    const fields: Record<string, string> = {};
    input.proposals.forEach((p, i) => {
      if (!vs.some((v) => v.id === p.variantId)) fields[`proposals.${i}.variantId`] = 'Not a variant of this study';
      if (input.proposals.findIndex((q) => q.variantId === p.variantId) !== i) fields[`proposals.${i}.variantId`] = 'Listed twice';
    });
    const missing = vs.filter((v) => !input.proposals.some((p) => p.variantId === v.id));
    if (missing.length) fields.proposals = `Propose a figure for variant ${missing.map((v) => v.code).join(', ')}`;
    if (Object.keys(fields).length) throw bad(fields);
    // Open out-of-specification investigations must be closed first: the review reads their conclusions.
    const open = await investigationsOf(tx, who.labId, { studyId, openOnly: true });
    if (open.length) {
      const list = open.map((i) => `${i.sampleCode} ${i.checkpoint.label} ${i.attribute.name}`).join('; ');
      throw new HttpError(409, 'conflict', `${open.length} out-of-specification ${open.length === 1 ? 'investigation is' : 'investigations are'} still open (${list}): close ${open.length === 1 ? 'it' : 'them'} before submitting`, {
        investigations: `${open.length} open: ${list}`,
      });
    }
    const [{ n }] = await tx
      .select({ n: sql<number>`count(*)` })
      .from(checkpoints)
      .where(and(eq(checkpoints.studyId, studyId), eq(checkpoints.status, 'open')));
    const openCps = Number(n);
    if (openCps > 0 && !input.openCheckpointsReason) {
      throw new HttpError(422, 'unprocessable', `${openCheckpointsText(openCps)}: finish them, or say why the study ends early`, {
        openCheckpointsReason: openCheckpointsProblem(openCps),
      });
    }
    const [{ id }] = await tx
      .insert(submissions)
      .values({
        labId: who.labId,
        studyId,
        summary: input.summary,
        proposals: input.proposals,
        openCheckpointsReason: input.openCheckpointsReason ?? null,
        submittedBy: who.id,
      })
      .$returningId();
    await tx.update(studies).set({ status: 'in_review' }).where(eq(studies.id, studyId));
    await audit(tx, {
      labId: who.labId,
      userId: who.id,
      action: 'submit',
      entity: 'study',
      entityId: studyId,
      oldValue: { status: 'running' },
      newValue: { status: 'in_review', submissionId: id, proposals: input.proposals, openCheckpoints: openCps },
      reason: input.openCheckpointsReason ?? null,
    });
  });
}

/** Re-authentication for a signature: the owner's password, with the same lockout as sign-in. */
export async function verifySigner(db: Db, log: Logger, userId: number, labId: number, password: string, studyId: number): Promise<{ name: string }> {
  const [u] = await db.select({ name: users.name, email: users.email, passwordHash: users.passwordHash }).from(users).where(eq(users.id, userId));
  const now = new Date();
  const claim = await claimAttempt(db, u.email, now, { reason: `${LOCKOUT.maxFailures} wrong passwords in a row (sign-in, signing or changing the password)` });
  if (!claim.ok) throw lockedError(claim.retryAfterSeconds, 'password');
  if (await bcrypt.compare(password, u.passwordHash)) {
    await passwordAccepted(db, u.email, now);
    return { name: u.name };
  }
  await audit(db, {
    labId,
    userId,
    action: 'sign_failed',
    entity: 'study',
    entityId: studyId,
    reason: claim.locksNow ? `Wrong password; signing locked for ${LOCKOUT.minutes} min` : 'Wrong password at signing',
  });
  log.warn(`signature refused for user ${userId} on study ${studyId}: wrong password${claim.locksNow ? ' (locked)' : ''}`);
  throw new HttpError(403, 'forbidden', 'The password is wrong: the decision was not signed', { password: 'Wrong password' });
}

/** Current (not superseded) decisions of a study, per variant. */
async function currentDecisions(db: DbOrTx, studyId: number) {
  const all = await db.select().from(decisions).where(eq(decisions.studyId, studyId)).orderBy(asc(decisions.id));
  const superseded = new Set(all.map((d) => d.supersedesId).filter((x): x is number => x != null));
  return { all, current: all.filter((d) => !superseded.has(d.id)) };
}

export async function decide(
  db: Db,
  log: Logger,
  who: { id: number; labId: number },
  studyId: number,
  input: DecisionInput,
): Promise<number> {
  const [lab] = await db.select().from(labs).where(eq(labs.id, who.labId));
  const [pre] = await db.select().from(studies).where(and(eq(studies.labId, who.labId), eq(studies.id, studyId)));
  if (!pre) throw notFound('No such study in your lab');
  if (lab.barSelfApproval) {
    const [sub] = await db.select().from(submissions).where(eq(submissions.studyId, studyId)).orderBy(desc(submissions.id)).limit(1);
    if (pre.createdBy === who.id || sub?.submittedBy === who.id) {
      throw forbidden('Your lab does not let the author of a study approve it: another owner must sign');
    }
  }
  // A shelf life longer than the analysis suggests needs a comment saying why (checked before the password, so a refused form costs no attempt).
  const releasing = input.outcome === 'released' || input.outcome === 'released_with_conditions';
  if (releasing && input.shelfLifeMonths != null && !input.comment) {
    const analysis = await analyzeStudy(db, who.labId, studyId, todayIn(lab.timeZone), lab.q10);
    const suggested = analysis.suggestions.find((s) => s.variantId === input.variantId)?.result.months;
    const why = longerThanSuggested(input, suggested);
    if (why) throw bad({ comment: why });
  }
  // So does a release without the challenge test the variant's risk panel expects.
  if (releasing && !input.comment) {
    const why = await missingChallengeTest(db, who.labId, studyId, input.variantId);
    if (why) throw bad({ comment: why });
  }
  const signer = await verifySigner(db, log, who.id, who.labId, input.password, studyId);

  return db.transaction(async (tx) => {
    const [study] = await tx
      .select()
      .from(studies)
      .where(and(eq(studies.labId, who.labId), eq(studies.id, studyId)))
      .for('update');
    if (study.status !== 'in_review' && !(study.status === 'decided' && input.supersedesId)) {
      throw conflict(
        study.status === 'decided' ? 'This study is decided: to change a decision, supersede it with a reason' : `The study is ${study.status.replace('_', ' ')}, not awaiting a decision`,
      );
    }
    const vs = await studyVariants(tx, studyId);
    const variant = vs.find((v) => v.id === input.variantId);
    if (!variant) throw bad({ variantId: 'Not a variant of this study' });
    const { current } = await currentDecisions(tx, studyId);
    const existing = current.find((d) => d.variantId === input.variantId);
    if (existing && existing.outcome !== 'continue_testing' && !input.supersedesId) {
      throw conflict(`Variant ${variant.code} already has a signed decision: supersede it with a reason`, { variantId: 'Already decided' });
    }
    if (input.supersedesId && existing?.id !== input.supersedesId) {
      throw conflict('Only the current decision of this variant can be superseded', { supersedesId: 'Not the current decision' });
    }

    let labelRule: string | null = null;
    let labelText: string | null = null;
    if (input.shelfLifeMonths && (input.outcome === 'released' || input.outcome === 'released_with_conditions')) {
      const [b] = await tx
        .select({ madeOn: batches.madeOn })
        .from(studyBatches)
        .innerJoin(batches, eq(batches.id, studyBatches.batchId))
        .where(and(eq(studyBatches.studyId, studyId), eq(batches.variantId, input.variantId)))
        .orderBy(asc(batches.madeOn))
        .limit(1);
      const ld = labelDating({ shelfLifeMonths: input.shelfLifeMonths, madeDate: b?.madeOn ?? null, periodAfterOpeningMonths: input.paoMonths ?? null });
      labelRule = ld.rule;
      labelText = ld.text;
    }

    if (input.outcome === 'continue_testing') {
      const scs = await tx
        .select({ sc: studyConditions, c: storageConditions })
        .from(studyConditions)
        .innerJoin(storageConditions, eq(storageConditions.id, studyConditions.conditionId))
        .where(eq(studyConditions.studyId, studyId));
      const [{ id: amendmentId }] = await tx
        .insert(amendments)
        .values({ labId: who.labId, studyId, kind: 'add_checkpoint', reason: `Returned for more testing (variant ${variant.code})${input.comment ? `: ${input.comment}` : ''}`, createdBy: who.id })
        .$returningId();
      for (const [i, n] of (input.newCheckpoints ?? []).entries()) {
        const sc = scs.find((x) => x.sc.id === n.studyConditionId);
        if (!sc) throw bad({ [`newCheckpoints.${i}.studyConditionId`]: 'Not a condition of this study' });
        const [s] = generateSchedule({ startDate: study.startDate, offsets: [n.offset], cycleHours: cycleHoursOf(sc.c) ?? undefined });
        const control = sc.sc.role === 'control' ? null : await pairedControlFor(tx, who.labId, study, sc.sc.pairControl, s, amendmentId);
        await tx.insert(checkpoints).values({
          labId: who.labId,
          studyId,
          studyConditionId: sc.sc.id,
          controlCheckpointId: control?.id ?? null,
          offsetUnit: n.offset.unit,
          offsetN: n.offset.n,
          label: s.label,
          dueDate: s.dueDate,
          windowBefore: s.windowBefore,
          windowAfter: s.windowAfter,
          amendmentId,
        });
      }
    }

    const dataHash = await studyDataHash(tx, who.labId, studyId);
    const signedAt = new Date();
    const [{ id }] = await tx
      .insert(decisions)
      .values({
        labId: who.labId,
        studyId,
        variantId: input.variantId,
        outcome: input.outcome,
        conditionsText: input.conditionsText ?? null,
        shelfLifeMonths: input.shelfLifeMonths ?? null,
        paoMonths: input.paoMonths ?? null,
        labelRule,
        labelText,
        comment: input.comment ?? null,
        signedBy: who.id,
        signerName: signer.name,
        signedAt,
        meaning: SIGNATURE_MEANINGS[input.outcome],
        dataHash,
        supersedesId: input.supersedesId ?? null,
        supersedeReason: input.supersedeReason ?? null,
      })
      .$returningId();

    // The study is decided once every variant has a final decision; "continue testing" reopens it.
    const after = (await currentDecisions(tx, studyId)).current;
    const anyContinue = after.some((d) => d.outcome === 'continue_testing');
    const allDecided = vs.every((v) => after.some((d) => d.variantId === v.id && d.outcome !== 'continue_testing'));
    const status = anyContinue ? 'running' : allDecided ? 'decided' : study.status === 'decided' ? 'decided' : 'in_review';
    if (status !== study.status) await tx.update(studies).set({ status }).where(eq(studies.id, studyId));
    await audit(tx, {
      labId: who.labId,
      userId: who.id,
      action: 'sign',
      entity: 'decision',
      entityId: id,
      studyId,
      oldValue: existing ? { decisionId: existing.id, outcome: existing.outcome } : null,
      newValue: {
        variant: variant.code,
        outcome: input.outcome,
        shelfLifeMonths: input.shelfLifeMonths ?? null,
        paoMonths: input.paoMonths ?? null,
        meaning: SIGNATURE_MEANINGS[input.outcome],
        signer: signer.name,
        signedAt: signedAt.toISOString(),
        dataHash,
        studyStatus: status,
        documents: await signedDocuments(tx, who.labId, studyId, variant.id),
      },
      reason: input.supersedeReason ?? input.comment ?? null,
    });
    return id;
  });
}

export async function reviewOf(db: Db, labId: number, studyId: number) {
  const [study] = await db.select({ id: studies.id }).from(studies).where(and(eq(studies.labId, labId), eq(studies.id, studyId)));
  if (!study) throw notFound('No such study in your lab');
  const [subs, vs, { all, current }, hash] = await Promise.all([
    db
      .select({ s: submissions, who: users.name })
      .from(submissions)
      .innerJoin(users, eq(users.id, submissions.submittedBy))
      .where(eq(submissions.studyId, studyId))
      .orderBy(desc(submissions.id)),
    studyVariants(db, studyId),
    currentDecisions(db, studyId),
    studyDataHash(db, labId, studyId),
  ]);
  const investigations = await investigationsOf(db, labId, { studyId });
  const supersededBy = new Map(all.filter((d) => d.supersedesId).map((d) => [d.supersedesId!, d.id]));
  // Decisions are numbered within the study, 1 for the first signed (ids count across every lab).
  const numberOf = new Map([...all].sort((a, b) => a.id - b.id).map((d, i) => [d.id, i + 1]));
  const view = (d: (typeof all)[number]): DecisionView => {
    const v = vs.find((x) => x.id === d.variantId);
    return {
      id: d.id,
      no: numberOf.get(d.id)!,
      supersedesNo: d.supersedesId != null ? (numberOf.get(d.supersedesId) ?? null) : null,
      variantId: d.variantId,
      variant: v ? `${v.code} · ${v.name}` : String(d.variantId),
      outcome: d.outcome,
      conditionsText: d.conditionsText,
      shelfLifeMonths: d.shelfLifeMonths,
      paoMonths: d.paoMonths,
      labelRule: d.labelRule,
      labelText: d.labelText,
      comment: d.comment,
      signerName: d.signerName,
      signedAt: d.signedAt.toISOString(),
      meaning: d.meaning,
      dataHash: d.dataHash,
      coversCurrentData: d.dataHash === hash,
      supersedesId: d.supersedesId,
      supersedeReason: d.supersedeReason,
      supersededById: supersededBy.get(d.id) ?? null,
    };
  };
  const submissionsOut: SubmissionView[] = subs.map(({ s, who }) => ({
    id: s.id,
    summary: s.summary,
    proposals: s.proposals as SubmissionView['proposals'],
    openCheckpointsReason: s.openCheckpointsReason,
    submittedBy: who,
    submittedAt: s.submittedAt.toISOString(),
  }));
  return {
    variants: vs,
    submission: submissionsOut[0] ?? null,
    submissions: submissionsOut,
    decisions: all.map(view),
    current: current.map(view),
    dataHash: hash,
    /** Every out-of-specification result and its investigation (open ones block submitting). */
    investigations,
  };
}

export async function reviewQueue(db: Db, labId: number): Promise<ReviewQueueItem[]> {
  const rows = await db
    .select({ id: studies.id, title: studies.title, product: products.name })
    .from(studies)
    .innerJoin(products, eq(products.id, studies.productId))
    .where(and(eq(studies.labId, labId), eq(studies.status, 'in_review')));
  if (!rows.length) return [];
  const ids = rows.map((r) => r.id);
  const subs = await db
    .select({ s: submissions, who: users.name })
    .from(submissions)
    .innerJoin(users, eq(users.id, submissions.submittedBy))
    .where(inArray(submissions.studyId, ids))
    .orderBy(desc(submissions.id));
  const out: ReviewQueueItem[] = [];
  for (const r of rows) {
    const sub = subs.find((s) => s.s.studyId === r.id);
    const vs = await studyVariants(db, r.id);
    const { current } = await currentDecisions(db, r.id);
    out.push({
      studyId: r.id,
      title: r.title,
      product: r.product,
      submittedBy: sub?.who ?? '',
      submittedAt: sub?.s.submittedAt.toISOString() ?? '',
      variants: vs.length,
      decided: current.filter((d) => d.outcome !== 'continue_testing').length,
    });
  }
  // Oldest submission first.
  return out.sort((a, b) => a.submittedAt.localeCompare(b.submittedAt));
}

/**
 * The lab's decided studies with the decision in force per variant, the most recent
 * decision first (three queries whatever the number of studies).
 */
export async function decidedStudies(db: Db, labId: number): Promise<DecidedStudyItem[]> {
  const rows = await db
    .select({ id: studies.id, title: studies.title, product: products.name })
    .from(studies)
    .innerJoin(products, eq(products.id, studies.productId))
    .where(and(eq(studies.labId, labId), eq(studies.status, 'decided')));
  if (!rows.length) return [];
  const ids = rows.map((r) => r.id);
  const [all, vs] = await Promise.all([
    db
      .select()
      .from(decisions)
      .where(and(eq(decisions.labId, labId), inArray(decisions.studyId, ids)))
      .orderBy(asc(decisions.id)),
    db
      .selectDistinct({ studyId: studyBatches.studyId, id: variants.id, code: variants.code, name: variants.name })
      .from(studyBatches)
      .innerJoin(batches, eq(batches.id, studyBatches.batchId))
      .innerJoin(variants, eq(variants.id, batches.variantId))
      .where(inArray(studyBatches.studyId, ids))
      .orderBy(asc(variants.code)),
  ]);
  const superseded = new Set(all.map((d) => d.supersedesId).filter((x): x is number => x != null));
  const out: DecidedStudyItem[] = [];
  for (const r of rows) {
    const current = all.filter((d) => d.studyId === r.id && !superseded.has(d.id));
    if (!current.length) continue;
    const latest = current.reduce((a, b) => (b.signedAt > a.signedAt || (b.signedAt.getTime() === a.signedAt.getTime() && b.id > a.id) ? b : a));
    out.push({
      studyId: r.id,
      title: r.title,
      product: r.product,
      decidedAt: latest.signedAt.toISOString(),
      decidedBy: latest.signerName,
      variants: vs
        .filter((v) => v.studyId === r.id)
        .flatMap((v) => {
          const d = current.find((x) => x.variantId === v.id);
          return d
            ? [{ variantId: v.id, code: v.code, name: v.name, outcome: d.outcome, shelfLifeMonths: d.shelfLifeMonths, paoMonths: d.paoMonths, conditionsText: d.conditionsText }]
            : [];
        }),
    });
  }
  // Most recent decision first.
  return out.sort((a, b) => b.decidedAt.localeCompare(a.decidedAt) || b.studyId - a.studyId);
}

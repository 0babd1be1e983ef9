/** One audit row as one sentence, per kind of record and action; an unknown kind falls back to its changes in words. */
import { auditActionLabel, auditEntityLabel } from '../../../shared/audit-words';
import type { Criterion } from '../../../shared/compute/criteria';
import { offsetLabel, type Offset } from '../../../shared/compute/schedule';
import { criterionText, formatNumber } from '../../../shared/criterion-text';
import { CONDITION_ROLE_LABELS, type AttributeScaleStep, type ConditionRole } from '../../../shared/domain';
import { CLOCK_SKEW_LIMIT_S } from '../../../shared/schemas/records';
import { AuditSource, LabFormat, ReadingInfo, AuditNames, Rec, rec, idOf, arr, str } from './common';
import { q, cut, plural, lowerFirst, end, withNote, dateText, instantText, readingText, judged, methodText, KIND_WORDS, ATTRIBUTE_KIND_WORDS, roleWord, statusWord, outcomeWord, fieldValue, changeList, conditionDefinition, DEMO_REASON, demoNote } from './values';

// ---------------------------------------------------------------- one sentence per row

/** One row as a sentence; any row the app writes reads in words, an unknown kind falls back to its changes in words. */
export function auditSentence(r: AuditSource, names: AuditNames, fmt: LabFormat): string {
  const o = rec(r.oldValue);
  const n = rec(r.newValue);
  const id = idOf(r.entityId);
  const studyId = r.studyId ?? (r.entity === 'study' ? id : null);
  const study = studyId ? names.studies.get(studyId) : undefined;
  const studyName = study ? q(study.title) : 'the study';
  const inStudy = study ? ` in ${q(study.title)}` : '';
  const reason = r.reason === DEMO_REASON ? null : r.reason;

  /** A reading's place: "pH for sample K7M2QX at Week 1 in “Title”". */
  const reading = (info: ReadingInfo | undefined) => {
    const attr = info?.attr ?? null;
    const attrName = attr?.name ?? str(n.attribute) ?? 'a result';
    const sample = info?.sample ?? str(n.sample) ?? '?';
    const cp = info?.checkpoint ?? str(n.checkpoint) ?? '?';
    return { attr, what: `${attrName} for sample ${sample} at ${cp === 'Initial' ? 'the initial test' : cp}${inStudy}` };
  };

  switch (`${r.action}:${r.entity}`) {
    // -------------------------------------------------------------- readings
    case 'create:observation': {
      const { attr, what } = reading(id ? names.observations.get(id) : undefined);
      if (n.verdict === 'not_done') return withNote(`Recorded ${what} as not done`, str(n.notDoneReason), 'Why');
      const method = methodText(attr, n.method);
      return end(`Recorded ${what}: ${judged(attr, n.value, n.verdict)}${method ? `, method ${method}` : ''}${deviceNote(n, fmt)}`);
    }
    case 'update:observation': {
      const { attr, what } = reading(id ? names.observations.get(id) : undefined);
      const change = `from ${judged(attr, o.value, o.verdict)} to ${judged(attr, n.value, n.verdict)}`;
      if (n.retestOfInvestigation != null) return withNote(`Replaced the result of ${what} with the valid re-test, ${change}`, reason);
      return withNote(`Corrected ${what} ${change}`, reason);
    }
    case 'void:observation': {
      const { attr, what } = reading(id ? names.observations.get(id) : undefined);
      return withNote(`Voided the reading of ${what}: ${judged(attr, o.value, o.verdict)}`, reason);
    }
    case 'create:photo':
      return end(
        `Added a photo of sample ${str(n.sample) ?? '?'} at ${str(n.checkpoint) ?? '?'}${inStudy}${str(n.file) ? `: ${q(cut(String(n.file), 80))}` : ''}${typeof n.bytes === 'number' ? ` (${bytesText(n.bytes)})` : ''}`,
      );
    case 'create:photo_regions':
    case 'update:photo_regions':
      return withNote(`${r.action === 'create' ? 'Marked' : 'Marked again'} the product and the reference card (${str(n.card) ?? '?'}) on a photo of sample ${str(n.sample) ?? '?'} at ${str(n.checkpoint) ?? '?'}${inStudy}`, reason);
    case 'create:risk_assessment':
    case 'update:risk_assessment': {
      const pao = typeof n.decidedPaoMonths === 'number' ? `; period after opening ${n.decidedPaoMonths} months` : '';
      return withNote(`${r.action === 'create' ? 'Assessed' : 'Re-assessed'} the microbial risk of variant ${str(n.variant) ?? '?'}: ${cut(str(n.outcome) ?? '?', 200).replace(/\.$/, '')}${pao}`, reason);
    }
    case 'create:product_document':
      return end(
        `Attached ${q(cut(str(n.title) ?? '?', 80))} (${str(n.kind)?.replace(/_/g, ' ') ?? 'document'}${str(n.criteria) ? `, ISO 11930 criteria ${n.criteria === 'not_met' ? 'not met' : `${str(n.criteria)} met`}` : ''}) to ${n.on === 'study' ? studyName : (str(n.on) ?? '?')}${typeof n.bytes === 'number' ? ` (${bytesText(n.bytes)})` : ''}${str(n.sha256) ? `, SHA-256 ${str(n.sha256)}` : ''}`,
      );
    case 'update:checkpoint': {
      const cp = id ? names.checkpoints.get(id) : undefined;
      const where = cp ? `${cp.label}${cp.condition ? ` at ${cp.condition}` : ''}` : 'a checkpoint';
      if (n.status === 'missed') return withNote(`Marked ${where}${inStudy} as missed`, reason);
      return withNote(`Changed ${where}${inStudy}: ${changeList(o, n, names, fmt) || 'no visible change'}`, reason);
    }

    // -------------------------------------------------------------- out-of-specification investigations
    case 'create:oos_investigation': {
      const { attr, what } = reading(id ? names.investigations.get(id) : undefined);
      const msg = str(n.message);
      // The evaluation's own message follows as a sentence: "pH 4.8 is 0.7 from day-0 5.5; allowed ±0.5."
      const opened = end(`Opened an out-of-specification investigation of ${what}: ${readingText(attr, n.value)}`);
      return msg ? `${opened} ${end(cut(msg, 200))}` : opened;
    }
    case 'remeasure:oos_investigation': {
      const { attr, what } = reading(id ? names.investigations.get(id) : undefined);
      const method = methodText(attr, n.method);
      const note = reason === 'Re-measured at the bench after an out-of-specification result' ? null : reason;
      return withNote(`Re-measured ${what} at the bench: first ${judged(attr, o.value, o.verdict)}, again ${judged(attr, n.remeasured, n.verdict)}${method ? `, method ${method}` : ''}`, note, 'Comment');
    }
    case 'confirm:oos_investigation': {
      const { what } = reading(id ? names.investigations.get(id) : undefined);
      return withNote(`Confirmed at the bench the out-of-specification result of ${what}`, reason, 'Comment');
    }
    case 'close:oos_investigation': {
      const { attr, what } = reading(id ? names.investigations.get(id) : undefined);
      const retest = rec(n.retest);
      const outcome =
        n.conclusion === 'invalidated'
          ? `invalidated as a lab error; the re-test ${judged(attr, retest.value, retest.verdict)} is used`
          : 'confirmed as a real result';
      return withNote(`Closed the out-of-specification investigation of ${what}: ${outcome}`, reason);
    }
    case 'import:oos_investigation': {
      const { attr, what } = reading(id ? names.investigations.get(id) : undefined);
      return withNote(`Imported an out-of-specification investigation of ${what}: ${readingText(attr, n.value)}, ${n.open === true ? 'open' : 'closed'}${demoNote(n)}`, reason);
    }

    // -------------------------------------------------------------- studies
    case 'create:study':
      return end(
        `Created the study plan ${q(str(n.title) ?? study?.title ?? '?')} for ${fieldValue('productId', n.productId, names, fmt)}: ${plural(arr(n.batchIds).length, 'batch', 'batches')}, ${plural(arr(n.conditions).length, 'storage condition')}, ${plural(arr(n.attributes).length, 'attribute')}, starting ${dateText(n.startDate, fmt)}`,
      );
    case 'update:study': {
      if (n.reviewReopened === true) {
        if (o.status === 'decided') return withNote(`Reopened the review of ${studyName}, which was decided`, reason);
        return withNote(`Changed a reading of ${studyName} while it was ${statusWord(o.status)}`, reason);
      }
      if (o.status === 'draft' && n.status === 'running') {
        const init = rec(n.initialTest);
        const retained = typeof init.retainedSamples === 'number' && init.retainedSamples > 0 ? `, ${plural(init.retainedSamples, 'retained sample')} for the initial test` : '';
        const samples = typeof n.samples === 'number' ? `: ${plural(n.samples, 'sample')}, ${plural(Number(n.checkpoints ?? 0), 'checkpoint')}${retained}` : '';
        return withNote(`Started the study ${studyName}${samples}`, reason === 'Study started' ? null : reason);
      }
      if ('title' in n && 'batchIds' in n) return withNote(`Changed the draft plan of ${studyName}: ${planChanges(o, n, names, fmt) || 'saved without changes'}`, reason);
      return withNote(`Changed the study ${studyName}: ${changeList(o, n, names, fmt) || 'no visible change'}`, reason);
    }
    case 'submit:study': {
      const proposals = arr(n.proposals).map((p) => {
        const x = rec(p);
        const vid = idOf(x.variantId);
        const code = (vid && names.variants.get(vid)?.code) || '?';
        const months = typeof x.shelfLifeMonths === 'number' ? plural(x.shelfLifeMonths, 'month') : 'no shelf life';
        const pao = typeof x.paoMonths === 'number' ? `, ${plural(x.paoMonths, 'month')} after opening` : '';
        return `${code}: ${months}${pao}`;
      });
      const open = typeof n.openCheckpoints === 'number' && n.openCheckpoints > 0 ? ` with ${plural(n.openCheckpoints, 'checkpoint')} still open` : '';
      return withNote(`Submitted ${studyName} for review${open}, proposing ${proposals.length ? proposals.join('; ') : 'no shelf life'}`, reason, open ? 'Why it ends early' : 'Reason');
    }
    case 'sign_failed:study':
      return end(`Signature refused on ${studyName}: ${lowerFirst(reason ?? 'wrong password')}`);
    case 'amend:study':
      return withNote(amendText(n, studyName, fmt), reason);
    case 'migrate:study': {
      const moved = arr(n.moved).map(rec);
      const readings = moved.reduce((s, m) => s + (typeof m.readings === 'number' ? m.readings : 0), 0);
      const extra = arr(n.extraReadings).map(rec).reduce((s, m) => s + (typeof m.readings === 'number' ? m.readings : 0), 0);
      const cancelled = arr(n.emptyDayZeroCancelled).length;
      const paired = typeof n.pullsPaired === 'number' ? n.pullsPaired : 0;
      const parts = [
        readings ? `${plural(readings, 'day-0 reading')} of ${plural(moved.length, 'batch', 'batches')} became initial readings` : null,
        extra ? `${plural(extra, 'reading')} kept as extra day-0 readings` : null,
        cancelled ? `${plural(cancelled, 'empty day-0 checkpoint')} cancelled` : null,
        paired ? `${plural(paired, 'pull')} paired with a same-day control reading` : null,
      ].filter(Boolean);
      return end(`Migrated ${studyName} to one initial test per batch: ${parts.length ? parts.join(', ') : 'it had no day-0 readings to move'}; no reading was deleted or changed in value`);
    }
    case 'import:study':
      return withNote(`Imported the study ${q(str(n.title) ?? study?.title ?? '?')}${demoNote(n)}`, reason);
    case 'import:photo_regions':
      return withNote(`Imported the product and reference-card regions marked on ${typeof n.photos === 'number' ? plural(n.photos, 'photo') : 'photos'}${inStudy}${demoNote(n)}`, reason);

    // -------------------------------------------------------------- decisions
    case 'sign:decision': {
      const d = id ? names.decisions.get(id) : undefined;
      const product = d?.product ?? study?.product ?? '';
      const variant = d?.variant ?? str(n.variant) ?? '?';
      const months = typeof n.shelfLifeMonths === 'number' ? `, ${plural(n.shelfLifeMonths, 'month')}` : '';
      const pao = typeof n.paoMonths === 'number' ? `, ${plural(n.paoMonths, 'month')} after opening` : '';
      const replaces = o.outcome ? `, replacing the earlier one (${outcomeWord(o.outcome)})` : '';
      return withNote(`Signed ${o.outcome ? 'a new' : 'the'} release decision for ${`${product} ${variant}`.trim()}${replaces}: ${outcomeWord(n.outcome)}${months}${pao}`, reason, o.outcome ? 'Reason' : 'Comment');
    }

    // -------------------------------------------------------------- storage
    case 'create:storage_condition':
      return withNote(
        `Created the storage condition ${q(str(n.name) ?? '?')}: ${KIND_WORDS[String(n.kind)] ?? 'condition'}, ${conditionDefinition(n)}${str(n.location) ? `, ${cut(String(n.location), 80)}` : ''}${n.isControl === true ? ', used as a control' : ''}${demoNote(n)}`,
        reason,
      );
    case 'update:storage_condition': {
      const name = q((id && names.conditions.get(id)) || str(o.name) || '?');
      const keys = Object.keys(n);
      if (keys.length === 1 && keys[0] === 'active') {
        return withNote(n.active ? `Brought the storage condition ${name} back into use` : `Retired the storage condition ${name}`, reason);
      }
      return withNote(`Changed the storage condition ${name}: ${changeList(o, n, names, fmt) || 'no visible change'}`, reason);
    }
    case 'import:chamber_log': {
      const cid = idOf(n.conditionId);
      const cond = q((cid && names.conditions.get(cid)) || 'a condition');
      const count = typeof n.readingCount === 'number' ? plural(n.readingCount, 'reading') : 'readings';
      const span = str(n.first) && str(n.last) ? ` from ${instantText(n.first, fmt)} to ${instantText(n.last, fmt)}` : '';
      const mkt = typeof n.mktC === 'number' ? `; mean kinetic temperature ${n.mktC.toFixed(1)} °C` : '';
      const tol =
        'hoursOutOfTolerance' in n
          ? typeof n.hoursOutOfTolerance === 'number'
            ? n.hoursOutOfTolerance === 0
              ? '; in tolerance throughout'
              : `; ${n.hoursOutOfTolerance.toFixed(n.hoursOutOfTolerance < 10 ? 2 : 1)} h out of tolerance`
            : '; tolerance not judged'
          : '';
      const file = str(n.fileName) ? ` ${q(cut(String(n.fileName), 80))}` : '';
      const unit = n.unit === 'F' ? ' (converted from °F)' : '';
      return withNote(`Imported the chamber log${file} for ${cond}: ${count}${span}${unit}${mkt}${tol}${demoNote(n)}`, reason);
    }

    // -------------------------------------------------------------- attributes
    case 'create:attribute': {
      const unit = str(n.unit);
      const crit = n.defaultCriterion ? criterionText(n.defaultCriterion as Criterion, { unit, scale: Array.isArray(n.scale) ? (n.scale as AttributeScaleStep[]) : null }) : 'No criterion';
      const decimals = n.kind === 'measured' && typeof n.decimals === 'number' ? `, ${plural(n.decimals, 'decimal')}` : '';
      return withNote(`Created the attribute ${q(str(n.name) ?? '?')} (${ATTRIBUTE_KIND_WORDS[String(n.kind)] ?? 'attribute'}${unit ? `, in ${unit}` : ''}${decimals}), default criterion: ${lowerFirst(crit)}`, reason);
    }
    case 'update:attribute': {
      const name = q((id && names.attributes.get(id)?.name) || '?');
      if (Object.keys(n).length === 1 && 'active' in n) return withNote(n.active ? `Made the attribute ${name} available again` : `Retired the attribute ${name}`, reason);
      return withNote(`Changed the attribute ${name}: ${changeList(o, n, names, fmt) || 'no visible change'}`, reason);
    }

    // -------------------------------------------------------------- formulas
    case 'create:product':
      return withNote(`Created the product ${q(str(n.name) ?? '?')} (${fieldValue('type', n.type, names, fmt)})`, reason);
    case 'update:product':
      return withNote(`Changed the product ${q((id && names.products.get(id)) || str(o.name) || '?')}: ${changeList(o, n, names, fmt) || 'no visible change'}`, reason);
    case 'create:ingredient':
      return withNote(`Added the ingredient ${q(str(n.tradeName) ?? '?')} (${str(n.inciName) ?? '?'}, ${fieldValue('function', n.function, names, fmt)}) to the library`, reason);
    case 'update:ingredient':
      return withNote(`Changed the ingredient ${q((id && names.ingredients.get(id)) || str(o.tradeName) || '?')}: ${changeList(o, n, names, fmt) || 'no visible change'}`, reason);
    case 'create:variant': {
      const pid = idOf(n.productId);
      const product = q((pid && names.products.get(pid)) || (id && names.variants.get(id)?.product) || '?');
      const lines = arr(n.lines).map(rec);
      const total = lines.reduce((s, l) => s + (typeof l.percent === 'number' ? l.percent : 0), 0);
      const linesText = lines.length ? `${plural(lines.length, 'formula line')} totalling ${formatNumber(total)} %` : 'no formula lines yet';
      const from = idOf(n.derivedFromId);
      if (from) return withNote(`Created variant ${str(n.code) ?? '?'} of ${product} as a copy of variant ${names.variants.get(from)?.code ?? '?'}: ${q(str(n.name) ?? '?')}, ${linesText}`, reason);
      return withNote(`Created variant ${str(n.code) ?? '?'} of ${product}: ${q(str(n.name) ?? '?')}, ${linesText}`, reason);
    }
    case 'update:variant': {
      const v = id ? names.variants.get(id) : undefined;
      const header = changeList(o, n, names, fmt, ['lines']);
      const lines = lineChanges(o.lines, n.lines, names);
      const parts = [header, lines].filter(Boolean).join('; ');
      return withNote(`Changed variant ${str(o.code) ?? v?.code ?? '?'} of ${q(v?.product ?? '?')}: ${parts || 'no visible change'}`, reason);
    }
    case 'create:batch': {
      const vid = idOf(n.variantId);
      const v = vid ? names.variants.get(vid) : undefined;
      const fill = `${typeof n.fillAmount === 'number' ? `, filled to ${formatNumber(n.fillAmount)} ${str(n.fillUnit) ?? 'g'}` : ''}${typeof n.fillingTempC === 'number' ? `, filled at ${formatNumber(n.fillingTempC)} °C` : ''}`;
      return withNote(
        `Recorded batch ${str(n.lotCode) ?? '?'} of ${v ? `${v.product} ${v.code}` : 'a variant'}, made ${dateText(n.madeOn, fmt)}: ${typeof n.sizeGrams === 'number' ? `${formatNumber(n.sizeGrams)} g` : '?'}, ${cut(str(n.packaging) ?? '?', 80)}${fill}`,
        reason,
      );
    }
    case 'import:batch': {
      const b = id ? names.batches.get(id) : undefined;
      return withNote(`Imported batch ${b ? `${b.lot} of ${b.product} ${b.variant}` : '?'}${demoNote(n)}${str(n.note) ? `: ${str(n.note)}` : ''}`, reason);
    }
    case 'import:formulas': {
      const count = (k: string, one: string, many?: string) => (typeof n[k] === 'number' ? plural(n[k] as number, one, many) : null);
      const parts = [count('ingredients', 'ingredient'), count('products', 'product'), count('variants', 'variant'), count('batches', 'batch', 'batches')].filter(Boolean);
      return withNote(`Imported the formula catalogue${parts.length ? `: ${parts.join(', ')}` : ''}${demoNote(n)}`, reason);
    }

    // -------------------------------------------------------------- the lab and its members
    case 'create:lab':
      return withNote(`Created the lab ${q(str(n.name) ?? '?')}${demoNote(n)}`, reason);
    case 'update:lab':
      return withNote(`Changed the lab settings: ${changeList(o, n, names, fmt) || 'no visible change'}`, reason);
    case 'create:invitation':
      return withNote(`Invited ${str(n.email) ?? '?'} to join as ${roleWord(n.role)}${str(n.expiresAt) ? `; the link works until ${instantText(n.expiresAt, fmt)}` : ''}`, reason);
    case 'void:invitation':
      return withNote(`Withdrew the invitation to ${str(o.email) ?? '?'}`, reason);
    case 'create:user':
      return withNote(
        `Joined the lab as ${roleWord(n.role)}${n.invitationId != null ? ' by accepting an invitation' : ''}: ${str(n.name) ?? '?'} (${str(n.email) ?? '?'})`,
        reason === 'Accepted an invitation' ? null : reason,
      );
    case 'update:user': {
      const u = id ? names.users.get(id) : undefined;
      const who = u?.name ?? 'a former member';
      const self = id != null && id === r.userId;
      if (n.password === 'changed') {
        if (reason === 'Password reset by e-mail link') return end('Set a new password with an e-mail reset link');
        const ended = typeof n.otherSessionsEnded === 'number' && n.otherSessionsEnded > 0 ? `; ${plural(n.otherSessionsEnded, 'other session')} signed out` : '';
        return withNote(`Changed ${self ? 'their own password' : `the password of ${who}`}${ended}`, reason === 'Password changed by the member while signed in' ? null : reason);
      }
      if ('role' in n) return withNote(`Changed the role of ${who} from ${roleWord(o.role)} to ${roleWord(n.role)}`, reason);
      if ('active' in n) {
        if (n.active === false) {
          const ended = typeof n.sessionsEnded === 'number' && n.sessionsEnded > 0 ? `; ${plural(n.sessionsEnded, 'open session')} ended` : '';
          return withNote(`Disabled the account of ${who}${ended}`, reason);
        }
        return withNote(`Enabled the account of ${who} again`, reason);
      }
      if ('remindersEnabled' in n) return withNote(`Turned reminder e-mails ${n.remindersEnabled ? 'on' : 'off'} for ${self ? 'themselves' : who}`, reason);
      return withNote(`Changed the member ${who}: ${changeList(o, n, names, fmt) || 'no visible change'}`, reason);
    }
    case 'lockout:user': {
      const u = id ? names.users.get(id) : undefined;
      const minutes = typeof n.minutes === 'number' ? ` for ${plural(n.minutes, 'minute')}` : '';
      const why = reason ? (/^\d/.test(reason) ? ` after ${reason}` : `: ${lowerFirst(reason)}`) : '';
      const ip = str(n.ip) ? `; the last attempt came from ${n.ip}` : '';
      return end(`Locked out ${u?.name ?? 'a member'}${minutes}${why}${ip}`);
    }
  }
  return fallback(r, names, fmt, reason);
}

/** A row of a kind this file does not know yet: its action, what it touched, and its changes in words. */
export function fallback(r: AuditSource, names: AuditNames, fmt: LabFormat, reason: string | null): string {
  const what = `${auditActionLabel(r.action)} ${r.entity === 'lab' ? 'the ' : 'a '}${auditEntityLabel(r.entity)}`;
  const changes = changeList(r.oldValue, r.newValue, names, fmt);
  return withNote(`${what}${changes ? `: ${changes}` : ''}`, reason);
}

export function bytesText(b: number): string {
  if (b < 1024) return `${b} bytes`;
  if (b < 1024 * 1024) return `${Math.round(b / 1024)} KB`;
  return `${(b / 1024 / 1024).toFixed(1)} MB`;
}

/** What an amendment did, in words. */
export function amendText(n: Rec, studyName: string, fmt: LabFormat): string {
  const cancelled = typeof n.cancelledCheckpoints === 'number' ? plural(n.cancelledCheckpoints, 'open checkpoint') : null;
  switch (n.kind) {
    case 'add_checkpoint': {
      const control = str(n.controlReading) ? `, paired with the control reading ${n.controlReading}${n.controlAdded === true ? ' (added)' : ''}` : '';
      return `Amended ${studyName}: added ${str(n.checkpoint) ?? 'a checkpoint'} at ${str(n.condition) ?? '?'}, due ${dateText(n.dueDate, fmt)}${control}`;
    }
    case 'end_condition':
      return `Amended ${studyName}: ended ${str(n.condition) ?? 'a condition'} on ${dateText(n.endedOn, fmt)}${cancelled ? `; ${cancelled} cancelled` : ''}`;
    case 'pair_control':
      return `Amended ${studyName}: ${str(n.checkpoint) ?? 'a pull'} is now judged against the control reading ${str(n.controlReading) ?? '?'}${str(n.controlDate) ? ` of ${dateText(n.controlDate, fmt)}` : ''}`;
    case 'cancel':
      return `Cancelled the study ${studyName}${cancelled ? `; ${cancelled} cancelled` : ''}`;
    default:
      return `Amended ${studyName}`;
  }
}

/** A draft plan's changes: title, dates and fields in words; batches, conditions and attributes by name. */
export function planChanges(o: Rec, n: Rec, names: AuditNames, fmt: LabFormat): string {
  const parts: string[] = [];
  const scalar = changeList(o, n, names, fmt, ['batchIds', 'conditions', 'attributes']);
  if (scalar) parts.push(scalar);
  const setDiff = (label: string, a: number[], b: number[], name: (id: number) => string) => {
    const added = b.filter((x) => !a.includes(x)).map(name);
    const removed = a.filter((x) => !b.includes(x)).map(name);
    if (added.length) parts.push(`${label} added: ${added.join(', ')}`);
    if (removed.length) parts.push(`${label} removed: ${removed.join(', ')}`);
  };
  const ids = (v: unknown, key?: string) => arr(v).map((x) => idOf(key ? rec(x)[key] : x)).filter((x): x is number => x != null);
  const batch = (bid: number) => names.batches.get(bid)?.lot ?? 'a batch';
  const cond = (cid: number) => q(names.conditions.get(cid) ?? 'a condition');
  const attr = (aid: number) => names.attributes.get(aid)?.name ?? 'an attribute';
  setDiff('batches', ids(o.batchIds), ids(n.batchIds), batch);
  setDiff('storage conditions', ids(o.conditions, 'conditionId'), ids(n.conditions, 'conditionId'), cond);
  setDiff('attributes', ids(o.attributes, 'attributeId'), ids(n.attributes, 'attributeId'), attr);
  for (const c of arr(n.conditions).map(rec)) {
    const cid = idOf(c.conditionId);
    const before = arr(o.conditions).map(rec).find((x) => idOf(x.conditionId) === cid);
    if (!cid || !before) continue;
    if (before.role !== c.role) parts.push(`role of ${cond(cid)} from ${roleOf(before.role)} to ${roleOf(c.role)}`);
    const offsets = (v: unknown) => arr(v).map((x) => offsetText(rec(x)));
    if (JSON.stringify(offsets(before.offsets)) !== JSON.stringify(offsets(c.offsets))) parts.push(`checkpoints of ${cond(cid)} now ${offsets(c.offsets).join(', ') || 'none'}`);
    if ((before.pairControl ?? true) !== (c.pairControl ?? true)) parts.push(`${cond(cid)} ${c.pairControl === false ? 'no longer paired' : 'paired again'} with a same-day control reading`);
  }
  for (const a of arr(n.attributes).map(rec)) {
    const aid = idOf(a.attributeId);
    const before = arr(o.attributes).map(rec).find((x) => idOf(x.attributeId) === aid);
    if (aid && before && JSON.stringify(before.criterion) !== JSON.stringify(a.criterion)) {
      const info = names.attributes.get(aid);
      parts.push(`criterion of ${attr(aid)} now ${criterionText(a.criterion as Criterion, { unit: info?.unit, scale: info?.scale })}`);
    }
  }
  return parts.join('; ');
}

export const roleOf = (r: unknown) => (typeof r === 'string' && r in CONDITION_ROLE_LABELS ? CONDITION_ROLE_LABELS[r as ConditionRole].toLowerCase() : 'none');
/** "Week 4", "Cycle 3", "Day 0", as the schedule labels checkpoints. */
export const offsetText = (o: Rec) => (typeof o.n === 'number' && typeof o.unit === 'string' ? offsetLabel(o as Offset) : '?');

/** Formula lines compared by ingredient: "Xanthan gum 0.3 % → 0.5 %", "added Glycerin 3 %". */
export function lineChanges(oldLines: unknown, newLines: unknown, names: AuditNames): string {
  const a = arr(oldLines).map(rec);
  const b = arr(newLines).map(rec);
  const name = (l: Rec) => {
    const iid = idOf(l.ingredientId);
    return (iid && names.ingredients.get(iid)) || 'an ingredient';
  };
  const pct = (l: Rec) => (typeof l.percent === 'number' ? `${formatNumber(l.percent)} %` : '?');
  const parts: string[] = [];
  for (const l of b) {
    const before = a.find((x) => x.ingredientId === l.ingredientId);
    if (!before) parts.push(`added ${name(l)} ${pct(l)}`);
    else {
      if (before.percent !== l.percent) parts.push(`${name(l)} from ${pct(before)} to ${pct(l)}`);
      if (before.phase !== l.phase) parts.push(`${name(l)} moved from phase ${String(before.phase)} to ${String(l.phase)}`);
    }
  }
  for (const l of a) if (!b.some((x) => x.ingredientId === l.ingredientId)) parts.push(`removed ${name(l)}`);
  return parts.join('; ');
}

/** A reading saved from a device's outbox: the device's time (the row's own time is the server's), and a clock far off. */
function deviceNote(n: Rec, fmt: LabFormat): string {
  if (typeof n.deviceRecordedAt !== 'string') return '';
  const off = typeof n.deviceClockOffsetS === 'number' ? n.deviceClockOffsetS : null;
  const skew = off != null && Math.abs(off) > CLOCK_SKEW_LIMIT_S ? `; the device clock was ${Math.round(Math.abs(off) / 60)} min ${off > 0 ? 'behind' : 'ahead of'} the server's` : '';
  return ` (recorded on the device at ${instantText(n.deviceRecordedAt, fmt)}, sent from its outbox${skew})`;
}

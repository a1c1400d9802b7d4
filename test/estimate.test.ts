/**
 * Structured estimates (src/estimate.ts): the verdict order and its combination, building an
 * Estimate, adding reasons, and that an Estimate stays a Quantity for every consumer (the
 * results schema, checked with ajv, a general-purpose JSON Schema validator).
 */
import { describe, expect, it } from 'vitest';
import Ajv from 'ajv';
import {
  addReason,
  asQuantity,
  combineVerdicts,
  convergenceNote,
  estimate,
  estimateOf,
  firstBlockingReason,
  hasReason,
  isOk,
  noteReason,
  reason,
  VERDICTS,
  type Reason,
  type Verdict,
} from '../src/estimate.js';
import { resultsSchema } from '../src/report/schema.js';
import { quantity } from '../src/types.js';

/**
 * The order the module comment states, typed here again as the specification: ok is best,
 * then unreliable, not converged, not determined.
 */
const ORDER: Verdict[] = ['ok', 'unreliable', 'not-converged', 'not-determined'];

describe('verdicts', () => {
  it('are listed best to worst as the module comment states', () => {
    // Truth: the order written in the module comment (our own definition; no source).
    expect([...VERDICTS]).toEqual(ORDER);
  });

  it('combine to the worse one, for every pair and triple (max over a total order)', () => {
    // Truth: a maximum over a total order is commutative and associative with the least
    // element as identity (common practice, no source); checked by brute force over every case.
    const worst = (...v: Verdict[]) => ORDER[Math.max(...v.map((x) => ORDER.indexOf(x)))];
    for (const a of ORDER) {
      expect(combineVerdicts(a)).toBe(a);
      expect(combineVerdicts('ok', a)).toBe(a);
      for (const b of ORDER) {
        expect(combineVerdicts(a, b)).toBe(worst(a, b));
        expect(combineVerdicts(a, b)).toBe(combineVerdicts(b, a));
        for (const c of ORDER) {
          expect(combineVerdicts(combineVerdicts(a, b), c)).toBe(combineVerdicts(a, combineVerdicts(b, c)));
          expect(combineVerdicts(a, b, c)).toBe(worst(a, b, c));
        }
      }
    }
    expect(combineVerdicts()).toBe('ok');
  });
});

describe('building an Estimate', () => {
  const drift = reason('series.drift', 'drifts by 0.52 ± 0.17 bar/ps', 'unreliable');
  const caution = reason('segments.student-t', 'only 3 independent segments');

  it('is a Quantity plus window, verdict and reasons; the verdict is the worst of its reasons', () => {
    // Truth: the definition in src/types.ts (Quantity) and the combination rule above.
    const e = estimate(1.5e-9, 2e-11, 'm^2/s', { window: { from: 1.4, to: 9.8, unit: 'ps' }, reasons: [caution, drift] });
    expect(asQuantity(e)).toEqual(quantity(1.5e-9, 2e-11, 'm^2/s'));
    expect(e.window).toEqual({ from: 1.4, to: 9.8, unit: 'ps' });
    expect(e.verdict).toBe('unreliable');
    expect(isOk(e)).toBe(false);
    expect(firstBlockingReason(e)).toBe(drift);
    expect(hasReason(e, 'series.drift')).toBe(true);
    expect(hasReason(e, 'msd.not-linear')).toBe(false);
    // No reasons, no verdict given: ok, no window.
    const plain = estimate(2, null, '1');
    expect([plain.verdict, plain.window, plain.reasons.length]).toEqual(['ok', null, 0]);
    // A verdict given explicitly is kept when it is the worse one.
    expect(estimate(2, null, '1', { verdict: 'not-converged', reasons: [drift] }).verdict).toBe('not-converged');
  });

  it('copies its inputs: changing the reasons array afterwards does not change the Estimate', () => {
    // Truth: value semantics the helpers promise (common practice, no source).
    const list: Reason[] = [caution];
    const e = estimateOf(quantity(3, 0.1, 'ps'), { reasons: list });
    list.push(drift);
    expect(e.reasons).toEqual([caution]);
    expect(e.verdict).toBe('ok');
  });

  it('adding a reason returns a new Estimate whose verdict never improves', () => {
    // Truth: the combination rule (a caution leaves a verdict as it was).
    const e = estimate(3, 0.1, 'ps');
    const worse = addReason(e, drift);
    expect(e.reasons).toEqual([]);
    expect(e.verdict).toBe('ok');
    expect(worse.verdict).toBe('unreliable');
    expect(addReason(worse, caution).verdict).toBe('unreliable');
    expect(addReason(worse, caution).reasons.map((r) => r.code)).toEqual(['series.drift', 'segments.student-t']);
  });

  it('keeps notes and reasons one for one, with the "not converged: " form where asked', () => {
    // Truth: the note convention of the MSD, VACF and conductivity analyses (src/fit.ts rules).
    const notes: string[] = [];
    const reasons: Reason[] = [];
    const failed = reason('plateau.not-found', 'no plateau: the running integral never settles', 'not-converged');
    noteReason(notes, reasons, caution, '', true);
    noteReason(notes, reasons, failed, 'Green–Kubo: ', true);
    noteReason(notes, reasons, failed);
    expect(notes).toEqual([
      'only 3 independent segments',
      'Green–Kubo: not converged: no plateau: the running integral never settles',
      'no plateau: the running integral never settles',
    ]);
    expect(reasons).toEqual([caution, failed, failed]);
    expect(convergenceNote(drift)).toBe(drift.text);
  });

  it('validates as a quantity under the results schema, and asQuantity drops the extras', async () => {
    // Truth: JSON Schema draft-07 as implemented by ajv (src/report/schema.ts: an object with
    // value and unit must be a complete quantity; extra keys are allowed).
    const ajv = new Ajv({ strict: true });
    const validate = ajv.compile(resultsSchema);
    const e = estimate(0.9, 0.2, '1', { window: { from: 0, to: 3.2, unit: 'A' }, reasons: [drift] });
    const doc = (x: unknown) => ({ tool: 'sojourn', version: '0.1.0', command: 'report', inputs: [], options: {}, results: { joins: { x } }, warnings: [] });
    expect(validate(JSON.parse(JSON.stringify(doc(e))))).toBe(true);
    // A negative uncertainty is refused, Estimate or not (the schema's rule, so the check can fail).
    expect(validate(JSON.parse(JSON.stringify(doc({ ...e, uncertainty: -1 }))))).toBe(false);
    expect(Object.keys(asQuantity(e))).toEqual(['value', 'uncertainty', 'unit']);
  });
});

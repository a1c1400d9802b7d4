/**
 * Structured estimates: one type for every number sojourn reports.
 *
 * An Estimate is a Quantity (value, one-standard-error uncertainty or null when unknown, unit)
 * plus the window of data it came from, a verdict on how far it can be relied on, and the
 * reasons behind that verdict. A consumer that only knows `Quantity` keeps working: every
 * Estimate is one.
 *
 * Reasons carry a stable `code` ('<area>.<what>', e.g. 'msd.not-linear') beside their words, so
 * that a program decides from the code and never from the wording; the words may change, the
 * codes do not. Each reason also says what it alone makes of the number (its own verdict): 'ok'
 * for a caution that leaves the number usable.
 *
 * Verdicts, from best to worst (a total order; combining takes the worst):
 *   'ok'             converged, with an error bar that can be used;
 *   'unreliable'     a value, but a check failed (too few independent samples, a drift, no
 *                    uncertainty) — read the reasons before using it;
 *   'not-converged'  the method's own convergence criterion failed (no linear window, no
 *                    plateau, a correlation that never decays);
 *   'not-determined' no value could be given.
 * Rule of the trade for reporting measurements (a value is only as good as its worst input);
 * common practice, no source.
 */
import type { Quantity } from './types.js';

/** How far a number can be relied on; see the module comment for the order. */
export type Verdict = 'ok' | 'unreliable' | 'not-converged' | 'not-determined';

/** The verdicts from best to worst. */
export const VERDICTS: readonly Verdict[] = ['ok', 'unreliable', 'not-converged', 'not-determined'];

/** One reason behind a verdict. */
export interface Reason {
  /** Stable identifier, '<area>.<what>' (e.g. 'msd.not-linear'); never changes with the wording. */
  code: string;
  /** The words, as the analysis writes them in its notes. */
  text: string;
  /** What this reason alone makes of the number ('ok' for a caution that leaves it usable). */
  verdict: Verdict;
}

/** The range of data a number came from: a fit window, a plateau, a production run. */
export interface EstimateWindow {
  from: number;
  to: number;
  /** Unit of `from` and `to` ('ps', 'A', 'samples'). */
  unit: string;
}

/** A reported number: a Quantity plus its window, verdict and reasons. */
export interface Estimate extends Quantity {
  /** The data range it came from, or null (a joined number, a whole-run property). */
  window: EstimateWindow | null;
  verdict: Verdict;
  reasons: Reason[];
}

/** A reason with its code, words and the verdict it implies on its own (default 'ok': a caution). */
export function reason(code: string, text: string, verdict: Verdict = 'ok'): Reason {
  return { code, text, verdict };
}

/**
 * The worse of verdicts, by their rank in VERDICTS ('ok' < 'unreliable' < 'not-converged' <
 * 'not-determined'); 'ok' for none. A maximum over a total order, so the combination is
 * associative and commutative and 'ok' is its identity (common practice, no source).
 */
export function combineVerdicts(...verdicts: Verdict[]): Verdict {
  let worst = 0;
  for (const v of verdicts) worst = Math.max(worst, VERDICTS.indexOf(v));
  return VERDICTS[worst];
}

/**
 * Build an Estimate from a value, its uncertainty (one standard error; null = unknown) and unit.
 * The verdict is the worst of `verdict` (default 'ok') and the verdicts of the reasons
 * (`combineVerdicts`).
 */
export function estimate(
  value: number,
  uncertainty: number | null,
  unit: string,
  more: { window?: EstimateWindow | null; verdict?: Verdict; reasons?: readonly Reason[] } = {},
): Estimate {
  const reasons = [...(more.reasons ?? [])];
  const verdict = combineVerdicts(more.verdict ?? 'ok', ...reasons.map((r) => r.verdict));
  return { value, uncertainty, unit, window: more.window ?? null, verdict, reasons };
}

/** An Estimate from a Quantity (value, uncertainty and unit copied), as `estimate` does. */
export function estimateOf(
  q: Quantity,
  more: { window?: EstimateWindow | null; verdict?: Verdict; reasons?: readonly Reason[] } = {},
): Estimate {
  return estimate(q.value, q.uncertainty, q.unit, more);
}

/**
 * A copy of `e` with the reason appended and the verdict made the worse of the two
 * (`combineVerdicts`); `e` is not changed.
 */
export function addReason(e: Estimate, r: Reason): Estimate {
  return { ...e, reasons: [...e.reasons, r], verdict: combineVerdicts(e.verdict, r.verdict) };
}

/** True when the verdict is 'ok'. */
export function isOk(e: Pick<Estimate, 'verdict'>): boolean {
  return e.verdict === 'ok';
}

/** The first reason that bears on the verdict (its own verdict is not 'ok'), or null. */
export function firstBlockingReason(e: Pick<Estimate, 'reasons'>): Reason | null {
  return e.reasons.find((r) => r.verdict !== 'ok') ?? null;
}

/** True when one of the reasons has the code. */
export function hasReason(e: Pick<Estimate, 'reasons'>, code: string): boolean {
  return e.reasons.some((r) => r.code === code);
}

/** The plain Quantity part {value, uncertainty, unit} of a Quantity or an Estimate (a copy). */
export function asQuantity(q: Quantity): Quantity {
  return { value: q.value, uncertainty: q.uncertainty, unit: q.unit };
}

/**
 * A reason in the words of the analyses that mark a failed check with "not converged: " (the
 * slope fits and running-integral plateaus of the MSD, VACF and conductivity): that prefix before
 * the text when the reason's verdict is 'not-converged', the text alone otherwise.
 */
export function convergenceNote(r: Reason): string {
  return r.verdict === 'not-converged' ? `not converged: ${r.text}` : r.text;
}

/**
 * Append a reason to `reasons` and its words to `notes` — after `prefix`, and in the
 * `convergenceNote` form when `marked` — so that the two lists an analysis returns side by side
 * (notes for people, reasons for programs) stay one for one.
 */
export function noteReason(notes: string[], reasons: Reason[], r: Reason, prefix = '', marked = false): void {
  notes.push(prefix + (marked ? convergenceNote(r) : r.text));
  reasons.push(r);
}

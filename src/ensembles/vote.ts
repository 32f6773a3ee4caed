import type { Verdict } from './verdict.js';

/**
 * Combining members' answers.
 * - `hard`: each voter gives its weight to its predicted class (plurality vote; Breiman 1996).
 * - `soft`: the weighted mean of the voters' class probabilities.
 * - `weighted`: soft voting with each member weighted by its accuracy over a recent window
 *   (accuracy-weighted voting as in Gomes et al., Machine Learning 106, 2017, from memory).
 * Members with weight 0 do not vote. With no voter at all, every member votes with weight 1.
 *
 * Calibration: a voter's answer (its probabilities, or its one-hot vote) is first shrunk towards the
 * uniform distribution by its confidence c: c·p + (1 − c)/C, where c is the mixture weight fitted to the
 * member's own record (`Seat.trust`). Trees with naive-Bayes leaves are overconfident (their posteriors
 * count correlated features as independent evidence): a plain average of them gave log-losses above
 * the no-information level ln C on real data (2.06 against ln 6 = 1.79 on Satellite), and a hard vote
 * infinite ones. The shrinkage keeps every class's probability at least (1 − c̄)/C.
 */
export type VoteKind = 'hard' | 'soft' | 'weighted';
export const VOTE_KINDS: readonly VoteKind[] = ['hard', 'soft', 'weighted'];

/**
 * Members' answers to one row: member `at + m`'s predicted class `preds[at + m]`, vote weight and
 * confidence likewise, and its `classes` probabilities from `probs[(at + m) × stride]` on.
 */
export interface MemberAnswers {
  readonly probs: Float64Array;
  readonly preds: Int32Array;
  readonly weights: Float64Array;
  readonly confidence: Float64Array;
  readonly classes: number;
  readonly stride: number;
  readonly at: number;
}

/**
 * Fill `verdict` from the members' answers, held in parts (one for an ensemble in this thread, one a
 * shard for members on worker threads): part p holds `counts[p]` members, the parts in seat order, every
 * part with the same `classes`. `hard` decides whether votes or probabilities are summed. The sums run
 * member by member in seat order, so the parts of a split ensemble vote bit for bit as the whole.
 */
export function combineVotes(
  hard: boolean,
  parts: readonly MemberAnswers[],
  counts: readonly number[],
  verdict: Verdict,
): void {
  const classes = parts[0]!.classes;
  if (classes === 2) {
    combineTwo(hard, parts, counts, verdict);
    return;
  }
  const out = verdict.fit(classes);
  out.fill(0, 0, classes);
  let members = 0;
  let total = 0;
  let voters = 0;
  for (let p = 0; p < parts.length; p++) {
    const { weights, at } = parts[p]!;
    const end = at + counts[p]!;
    members += counts[p]!;
    for (let s = at; s < end; s++) {
      const w = weights[s]!;
      if (w > 0) {
        total += w;
        voters++;
      }
    }
  }
  const everyone = voters === 0;
  if (everyone) {
    total = members;
    voters = members;
  }
  for (let p = 0; p < parts.length; p++) {
    const { probs, preds, weights, confidence, stride, at } = parts[p]!;
    const end = at + counts[p]!;
    for (let s = at; s < end; s++) {
      const w = everyone ? 1 : weights[s]!;
      if (!(w > 0)) continue;
      const c = confidence[s]!;
      const spread = (w * (1 - c)) / classes;
      if (hard) {
        for (let k = 0; k < classes; k++) out[k]! += spread;
        out[preds[s]!]! += w * c;
      } else {
        const base = s * stride;
        const wc = w * c;
        for (let k = 0; k < classes; k++) out[k]! += wc * probs[base + k]! + spread;
      }
    }
  }
  let best = 0;
  if (total > 0) {
    const inv = 1 / total;
    for (let k = 0; k < classes; k++) {
      out[k]! *= inv;
      if (out[k]! > out[best]!) best = k;
    }
  } else {
    for (let k = 0; k < classes; k++) out[k] = 1 / classes;
  }
  let agree = 0;
  for (let p = 0; p < parts.length; p++) {
    const { preds, weights, at } = parts[p]!;
    const end = at + counts[p]!;
    for (let s = at; s < end; s++) if ((everyone || weights[s]! > 0) && preds[s] === best) agree++;
  }
  verdict.predicted = best;
  verdict.voters = voters;
  verdict.agreement = voters > 0 ? agree / voters : 0;
}

/**
 * `combineVotes` for two classes, the common case: the same sums in the same order, bit for bit, in one
 * pass over the members (a second only when no member has a weight, and all vote with weight 1), kept in
 * locals rather than written to the verdict member by member, with each class's agreeing voters counted
 * on the way.
 */
function combineTwo(
  hard: boolean,
  parts: readonly MemberAnswers[],
  counts: readonly number[],
  verdict: Verdict,
): void {
  let total = 0;
  let voters = 0;
  let zero = 0;
  let one = 0;
  let zeros = 0;
  let ones = 0;
  for (let everyone = 0; everyone < 2 && voters === 0; everyone++) {
    for (let p = 0; p < parts.length; p++) {
      const { probs, preds, weights, confidence, stride, at } = parts[p]!;
      const end = at + counts[p]!;
      for (let s = at; s < end; s++) {
        const w = everyone === 1 ? 1 : weights[s]!;
        if (!(w > 0)) continue;
        total += w;
        voters++;
        const c = confidence[s]!;
        const spread = (w * (1 - c)) / 2;
        const pred = preds[s]!;
        if (hard) {
          zero += spread;
          one += spread;
          if (pred === 0) zero += w * c;
          else one += w * c;
        } else {
          const wc = w * c;
          zero += wc * probs[s * stride]! + spread;
          one += wc * probs[s * stride + 1]! + spread;
        }
        if (pred === 0) zeros++;
        else if (pred === 1) ones++;
      }
    }
  }
  if (total > 0) {
    const inv = 1 / total;
    zero *= inv;
    one *= inv;
  } else {
    zero = 0.5;
    one = 0.5;
  }
  const best = one > zero ? 1 : 0;
  const out = verdict.fit(2);
  out[0] = zero;
  out[1] = one;
  verdict.predicted = best;
  verdict.voters = voters;
  verdict.agreement = voters > 0 ? (best === 1 ? ones : zeros) / voters : 0;
}

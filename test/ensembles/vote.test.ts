import { describe, expect, it } from 'vitest';
import { Rng } from '../../src/core/index.js';
import { combineVotes, Verdict } from '../../src/ensembles/index.js';

/**
 * The vote written out term by term as vote.ts documents it: each voter's answer shrunk towards the
 * uniform one by its confidence c (c·p + (1 − c)/C), weighted by w, summed member by member in seat
 * order and divided by the total weight; members with weight 0 sit out unless nobody votes.
 */
function reference(
  hard: boolean,
  probs: Float64Array,
  preds: Int32Array,
  weights: Float64Array,
  confidence: Float64Array,
  members: number,
  classes: number,
): number[] {
  const everyone = !Array.from(weights.subarray(0, members)).some((w) => w > 0);
  const out = new Array<number>(classes).fill(0);
  let total = 0;
  for (let m = 0; m < members; m++) if (everyone || weights[m]! > 0) total += everyone ? 1 : weights[m]!;
  for (let m = 0; m < members; m++) {
    const w = everyone ? 1 : weights[m]!;
    if (!(w > 0)) continue;
    const c = confidence[m]!;
    const spread = (w * (1 - c)) / classes;
    if (hard) {
      for (let k = 0; k < classes; k++) out[k]! += spread;
      out[preds[m]!]! += w * c;
    } else {
      for (let k = 0; k < classes; k++) out[k]! += w * c * probs[m * classes + k]! + spread;
    }
  }
  return out.map((v) => v * (1 / total));
}

describe('combineVotes', () => {
  it('gives two classes (its fast path) and three the documented weighted mean, bit for bit', () => {
    const rng = new Rng('vote');
    const verdict = new Verdict();
    let checked = 0;
    for (let trial = 0; trial < 400; trial++) {
      const classes = trial % 2 === 0 ? 2 : 3;
      const members = 1 + (trial % 12);
      const hard = trial % 3 === 0;
      const probs = new Float64Array(members * classes);
      const preds = new Int32Array(members);
      const weights = new Float64Array(members);
      const confidence = new Float64Array(members);
      for (let m = 0; m < members; m++) {
        let sum = 0;
        for (let k = 0; k < classes; k++) sum += probs[m * classes + k] = rng.next();
        for (let k = 0; k < classes; k++) probs[m * classes + k]! /= sum;
        preds[m] = Math.floor(rng.next() * classes);
        // Some members sit out; in some trials every one does.
        weights[m] = trial % 5 === 0 || rng.next() < 0.2 ? 0 : trial % 4 === 0 ? rng.next() : 1;
        confidence[m] = rng.next();
      }
      combineVotes(
        hard,
        [{ probs, preds, weights, confidence, classes, stride: classes, at: 0 }],
        [members],
        verdict,
      );
      const expected = reference(hard, probs, preds, weights, confidence, members, classes);
      expect(Array.from(verdict.probabilities.subarray(0, classes))).toEqual(expected);
      const best = expected.indexOf(Math.max(...expected));
      expect(verdict.predicted).toBe(best);
      // The same answers split in two parts (as over two threads), each placed among others' (from slot
      // `at`, `stride` slots a member), vote the same.
      const split = Math.floor(members / 2);
      const place = (first: number, count: number, at: number, stride: number) => {
        const slots = at + count + 2;
        const part = {
          probs: Float64Array.from({ length: slots * stride }, () => rng.next()),
          preds: Int32Array.from({ length: slots }, () => Math.floor(rng.next() * classes)),
          weights: Float64Array.from({ length: slots }, () => rng.next()),
          confidence: Float64Array.from({ length: slots }, () => rng.next()),
          classes,
          stride,
          at,
        };
        for (let m = 0; m < count; m++) {
          part.preds[at + m] = preds[first + m]!;
          part.weights[at + m] = weights[first + m]!;
          part.confidence[at + m] = confidence[first + m]!;
          for (let k = 0; k < classes; k++)
            part.probs[(at + m) * stride + k] = probs[(first + m) * classes + k]!;
        }
        return part;
      };
      const parts = [
        place(0, split, 1 + (trial % 3), classes + (trial % 2)),
        place(split, members - split, trial % 4, classes + 1),
      ];
      const again = new Verdict();
      combineVotes(hard, parts, [split, members - split], again);
      expect(Array.from(again.probabilities.subarray(0, classes))).toEqual(expected);
      expect([again.predicted, again.voters, again.agreement]).toEqual([
        verdict.predicted,
        verdict.voters,
        verdict.agreement,
      ]);
      checked++;
    }
    expect(checked).toBe(400);
  });
});

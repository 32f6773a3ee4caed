/**
 * Per-row scratch of an ensemble: every member's class probabilities (member-major), predicted class,
 * vote weight and confidence. Allocated once and grown only when classes appear.
 */
export class MemberScratch {
  readonly members: number;
  classes = 0;
  probs = new Float64Array(0);
  readonly preds: Int32Array;
  readonly weights: Float64Array;
  /** How far each member's answer is trusted, in [0, 1]: its accuracy over the recent window. */
  readonly confidence: Float64Array;

  constructor(members: number) {
    this.members = members;
    this.preds = new Int32Array(members);
    this.weights = new Float64Array(members);
    this.confidence = new Float64Array(members);
  }

  fit(classes: number): void {
    this.classes = classes;
    this.probs = new Float64Array(this.members * classes);
  }
}

/**
 * Labels wait for their events. Kafka does not order the labels topic against the events topic, so a
 * service that (re)joins with both behind could read most labels before the events they belong to; the
 * session would hold each for its event (`EarlyLabels`, within its bounds) and join it after the event's
 * batch, later than an uninterrupted run joined it. On each join the labels topic is held until every
 * assigned events partition has been read up to the end it had at that moment; every label already on
 * its topic then was written after its event (that is how labels come about), so it finds its
 * prediction. A restart after a crash thus joins exactly the labels an uninterrupted run joined, in the
 * same order.
 *
 * @example
 * const hold = new LabelHold('legs-labels', (topic) => consumer.resumeTopic(topic));
 * consumer joins → plan.hold = hold.join(streams)
 * hold.until(ends, position)            // once the events partitions' ends are known
 * hold.check(position)                  // after each events batch
 */
export class LabelHold {
  /** Events streams → the offset that must be reached; null while the ends are being read. */
  private targets: Map<string, bigint> | null = null;
  private held = false;

  constructor(
    private readonly topic: string | null,
    private readonly release: (topic: string) => void,
  ) {}

  /** A join: the topics to hold (the labels topic, when this member reads it). */
  join(streams: readonly string[]): string[] {
    this.targets = null;
    this.held = this.topic !== null && streams.some((s) => s.startsWith(`${this.topic}/`));
    return this.held ? [this.topic!] : [];
  }

  /** The ends of the assigned events partitions at the join; `position` says where each stands. */
  until(ends: ReadonlyMap<string, bigint>, position: (stream: string) => bigint | undefined): void {
    this.targets = new Map(ends);
    this.check(position);
  }

  /** Release the labels once every events partition reached its target. */
  check(position: (stream: string) => bigint | undefined): void {
    if (!this.held || this.targets === null) return;
    for (const [stream, end] of this.targets) {
      const at = position(stream);
      if (at === undefined || at < end) return;
    }
    this.held = false;
    this.release(this.topic!);
  }
}

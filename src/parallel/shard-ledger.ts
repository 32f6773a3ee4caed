import { inWindow, type LifecycleSnapshot, type SeatLedger } from '../ensembles/index.js';

/**
 * The member lifecycle couples the seats of an ensemble: at most `maxReplacements` replacements happen
 * in any `replacementWindow` rows (member ids are the seats' own: see `memberId`). Shards of one bagging
 * ensemble in different threads keep the cap exactly as one thread would through this ledger, in shared
 * memory while a batch is out:
 *
 *   per shard a line of its own: its progress (steps of the batch done), then the step each other
 *   shard waits for it to reach (0: none); the next chunk of rows to combine (see `claim`), on a line
 *   of its own; then per shard: replacements, the step and the row of each.
 *
 * A shard writes its progress at every step and reads the steps waited for, so each shard's line holds
 * only what its own steps touch (64 bytes, a cache line on x86 and most ARM): with every progress word
 * on one line, each step of one shard took the line from the other's core.
 *
 * Shard w holds seats below those of shard w + 1, so an event of shard v at step q comes before the
 * event of shard w at step i in the one-thread order exactly when q < i, or q = i and v < w. A shard
 * that asks the cap at step i first waits until every shard before it has done step i and every shard
 * after it step i − 1 (blocking its own thread, never the main one), then counts the replacements
 * before its own in the logs. Questions are rare (a drift or a trial whose understudy proved better),
 * so the shards otherwise run freely; waits never form a cycle, since the earliest waiting (step,
 * shard) has all it waits for. Between batches the ledger is the recent replacement rows and the epoch
 * (`LedgerHost`), which the main thread and every shard each take in from a finished batch's logs.
 *
 * A shard through with its rows of a batch need not wait for the others: it closes the batch (`close`)
 * and may start the next one, taking the closed batch's events in (`settleClosed`) only once every
 * shard is through it — before it answers the batch, or earlier when the next batch asks the cap. The main thread clears a set of words for a new batch only once every shard has answered
 * the batch that used it last, so a closed batch's words stay until its shard has settled them.
 *
 * A shard waiting for another's progress first polls it for a few microseconds, then sleeps having
 * written the step it waits for, and the other wakes it only once that step is done: a sleeper costs a
 * wake-up (a system call on each side, tens of microseconds on a virtual machine), so a shard neither
 * sleeps on a short wait nor is woken at every row of a long one.
 */
/** A shard's count of replacements, before its logs. */
const PER_SHARD_HEAD = 1;
/** Loads of a word before a thread sleeps on it: some 10 µs (an atomic load takes some 20–30 ns in Node 20). */
const SPINS = 512;
/** A shard's logs: the step of each replacement, then its row. */
const LOGS = 2;
/** Progress of a shard that failed: nobody waits for it (the batch fails as a whole). */
export const FAILED = 0x7fffffff;
/** What `claim` returns when no chunk is left, and when the next chunk's rows are not all answered. */
export const NONE_LEFT = -1;
export const NOT_READY = -2;
const WAIT_MS = 1000;

/** Words of a ledger for `shards` shards with room for `cap` replacements per shard. */
export function ledgerWords(shards: number, cap: number): Int32Array<SharedArrayBuffer> {
  return new Int32Array(new SharedArrayBuffer(4 * base(shards, cap, shards)));
}

/**
 * Load `words[index]` until it is at least `value`, for some 10 µs at most — about what a sleep and a
 * wake-up would cost; the word then.
 */
export function poll(words: Int32Array, index: number, value: number): number {
  let word = Atomics.load(words, index);
  for (let i = 0; word < value && i < SPINS; i++) word = Atomics.load(words, index);
  return word;
}

/** Int32 words in a cache line. */
const LINE_WORDS = 16;

/** Words of a shard's line: its progress and a word for each shard (its own unused), in whole lines. */
function lineWords(shards: number): number {
  return LINE_WORDS * Math.ceil((1 + shards) / LINE_WORDS);
}

/** The word of shard `v`'s progress. */
function progress(shards: number, v: number): number {
  return v * lineWords(shards);
}

/** The word where shard `w` writes the step it waits for shard `v` to reach (on `v`'s line). */
function wanted(shards: number, w: number, v: number): number {
  return progress(shards, v) + 1 + w;
}

/** The word that hands out chunks of rows to combine; the shards that left the batch follow it. */
function chunkWord(shards: number): number {
  return shards * lineWords(shards);
}

/** Where shard `v`'s counts and logs start (after the progress lines and the chunk word's line). */
function base(shards: number, cap: number, v: number): number {
  return chunkWord(shards) + LINE_WORDS + v * (PER_SHARD_HEAD + LOGS * cap);
}

/** A shard's side of the ledger: the `SeatLedger` its lifecycle asks. */
export class ShardLedger implements SeatLedger {
  /** This shard's number (its seats come after those of every lower number). */
  readonly shard: number;
  /** Shards of the ensemble. */
  readonly shards: number;
  /** Seats of the whole ensemble. */
  readonly seats: number;
  private readonly window: number;
  private readonly max: number;
  /**
   * The ledger between batches, kept by each shard as by the main thread (the same events taken in the
   * same way), so that a batch can go out before the one ahead of it is in.
   */
  private readonly between: LedgerHost;
  private words: Int32Array = new Int32Array(0);
  private cap = 0;
  /** The batch closed and not yet settled: its words, their layout, its steps, the rows after it. */
  private closed: Int32Array | null = null;
  private closedCap = 0;
  private closedSteps = 0;
  private closedRows = 0;
  /** The step of the batch being run. */
  step = 0;

  constructor(
    shard: number,
    shards: number,
    seats: number,
    window: number,
    max: number,
    start: Pick<LifecycleSnapshot, 'replacements' | 'epoch'>,
  ) {
    this.shard = shard;
    this.shards = shards;
    this.seats = seats;
    this.window = window;
    this.max = max;
    this.between = new LedgerHost(shards, window, start.replacements, start.epoch);
  }

  /** Start a batch on the ledger's words (laid out for `cap` replacements per shard). */
  begin(words: Int32Array, cap: number): void {
    this.words = words;
    this.cap = cap;
    this.step = 0;
  }

  /**
   * This shard is through the batch begun last, of `steps` steps, after which the ensemble has trained
   * on `rows` rows; its events are taken in by `settleClosed` (the batch closed before must be settled).
   */
  close(steps: number, rows: number): Int32Array {
    this.closed = this.words;
    this.closedCap = this.cap;
    this.closedSteps = steps;
    this.closedRows = rows;
    return this.words;
  }

  /**
   * Once every shard is through the closed batch (or failed), take in its events as the main thread
   * does; nothing when there is none.
   */
  settleClosed(): void {
    const words = this.closed;
    if (words === null) return;
    for (let v = 0; v < this.shards; v++) if (v !== this.shard) this.reach(v, this.closedSteps, words);
    this.between.settle(words, this.closedCap, this.closedSteps, this.closedRows, null);
    this.closed = null;
  }

  /**
   * `steps` steps of the batch are done (FAILED: none will be); wakes a shard asleep until then, once:
   * the step it waits for is cleared as it is woken (left set, every row until the sleeper ran again
   * woke it again, a system call each: most of this function's time in a profile on a busy host).
   */
  done(steps: number): void {
    const { words, shard, shards } = this;
    const at = progress(shards, shard);
    Atomics.store(words, at, steps);
    let woken = false;
    for (let w = 0; w < shards; w++) {
      if (w === shard) continue;
      const step = Atomics.load(words, at + 1 + w);
      // Cleared only if it is still that step (the sleeper may since wait for another).
      if (step > 0 && steps >= step && Atomics.compareExchange(words, at + 1 + w, step, 0) === step)
        woken = true;
    }
    if (woken) Atomics.notify(words, at);
  }

  /**
   * Claim the next chunk of `chunk` rows to combine of a batch of `rows` rows (in `words`) if every
   * shard has answered its rows, never waiting: its number, or NONE_LEFT when every chunk is claimed
   * (or a shard failed: the batch fails as a whole), or NOT_READY. A chunk goes to the first shard that
   * claims it.
   */
  claim(words: Int32Array, rows: number, chunk: number): number {
    const at = chunkWord(this.shards);
    for (;;) {
      const next = Atomics.load(words, at);
      const from = next * chunk;
      if (from >= rows) return NONE_LEFT;
      const to = Math.min(rows, from + chunk);
      for (let v = 0; v < this.shards; v++) {
        const p = Atomics.load(words, progress(this.shards, v));
        if (p === FAILED) return NONE_LEFT;
        if (p < to) return NOT_READY;
      }
      if (Atomics.compareExchange(words, at, next, next + 1) === next) return next;
    }
  }

  /**
   * Count this shard out of the batch in `words`, once, after its last step: whether it is the last
   * shard to leave it (all the others are through it then).
   */
  leave(words: Int32Array): boolean {
    return Atomics.add(words, chunkWord(this.shards) + 1, 1) === this.shards - 1;
  }

  /** Wait until every shard has answered the rows of the next chunk to claim in `words` (see `claim`). */
  awaitChunk(words: Int32Array, rows: number, chunk: number): void {
    const to = Math.min(rows, (Atomics.load(words, chunkWord(this.shards)) + 1) * chunk);
    for (let v = 0; v < this.shards; v++) if (v !== this.shard) this.reach(v, to, words);
  }

  capReached(row: number): boolean {
    this.settleClosed();
    this.settle();
    let n = inWindow(this.between.history, row, this.window);
    const { words, cap } = this;
    for (let v = 0; v < this.shards; v++) {
      const at = base(this.shards, cap, v);
      const rows = at + PER_SHARD_HEAD + cap;
      const count = this.before(v);
      for (let i = 0; i < count; i++) if (words[rows + i]! > row - this.window) n++;
    }
    return n >= this.max;
  }

  replaced(row: number): void {
    const { words, cap } = this;
    const at = base(this.shards, cap, this.shard);
    const own = words[at]!;
    words[at + PER_SHARD_HEAD + own] = this.step;
    words[at + PER_SHARD_HEAD + cap + own] = row;
    Atomics.store(words, at, own + 1);
  }

  /** The main thread keeps the replacements of the whole ensemble; a shard's own say nothing. */
  snapshot(_row: number): Pick<LifecycleSnapshot, 'replacements'> {
    return { replacements: [] };
  }

  /** Wait until every replacement before this shard's at this step is in the logs. */
  private settle(): void {
    const { shards, step } = this;
    for (let v = 0; v < shards; v++) if (v !== this.shard) this.reach(v, v < this.shard ? step + 1 : step);
  }

  /**
   * Wait until shard `v` has done `steps` steps of the batch in `words` (polling a while, then asleep);
   * its progress then.
   */
  private reach(v: number, steps: number, words = this.words): number {
    const from = progress(this.shards, v);
    let p = poll(words, from, steps);
    if (p >= steps) return p;
    // The shard waited for clears the step when it wakes this one (see `done`).
    const at = wanted(this.shards, this.shard, v);
    Atomics.store(words, at, steps);
    for (p = Atomics.load(words, from); p < steps; p = Atomics.load(words, from))
      Atomics.wait(words, from, p, WAIT_MS);
    Atomics.store(words, at, 0);
    return p;
  }

  /** How many of shard `v`'s replacements come before this shard's at this step. */
  private before(v: number): number {
    const at = base(this.shards, this.cap, v);
    const words = this.words;
    const count = Atomics.load(words, at);
    if (v === this.shard) return count;
    const from = at + PER_SHARD_HEAD;
    const last = v < this.shard ? this.step : this.step - 1;
    let n = 0;
    while (n < count && words[from + n]! <= last) n++;
    return n;
  }
}

/**
 * The ledger's words for one batch in flight, in shared memory, laid out for `cap` replacements per
 * shard (the most a batch as large as the largest so far can make).
 */
export class LedgerWords {
  readonly shards: number;
  words = new Int32Array(new SharedArrayBuffer(0));
  cap = 0;

  constructor(shards: number) {
    this.shards = shards;
  }

  /** Clear the words for a batch of `steps` steps whose shards hold at most `seats` seats each. */
  prepare(steps: number, seats: number): void {
    const cap = Math.max(1, steps * seats);
    if (cap > this.cap) {
      this.cap = cap;
      this.words = ledgerWords(this.shards, cap);
      return;
    }
    // The layout stays that of the larger batch the words were made for (`this.cap`).
    const words = this.words;
    words.fill(0, 0, base(this.shards, this.cap, 0));
    for (let v = 0; v < this.shards; v++) {
      const at = base(this.shards, this.cap, v);
      words.fill(0, at, at + PER_SHARD_HEAD);
    }
  }
}

/**
 * What the ledger holds between batches — the replacement rows that can still count towards the cap,
 * the replacements so far — and how a finished batch's replacements move it on: kept by the main
 * thread, and by each shard for itself.
 */
export class LedgerHost {
  readonly shards: number;
  private readonly window: number;
  /** Replacement rows that can still count towards the cap. */
  history: number[];
  /** Replacements so far. */
  epoch: number;

  constructor(shards: number, window: number, history: readonly number[], epoch: number) {
    this.shards = shards;
    this.window = window;
    this.history = [...history];
    this.epoch = epoch;
  }

  /**
   * Take in the replacements of a finished batch of `steps` steps in `words` (laid out for `cap`): their
   * rows in the one-thread order, and (into `epochs`, when given) the epoch that served each step; `rows`
   * is the ensemble's row count after it.
   */
  settle(words: Int32Array, cap: number, steps: number, rows: number, epochs: Int32Array | null): void {
    const shards = this.shards;
    const next = new Int32Array(shards);
    let epoch = this.epoch;
    // The replacements in the one-thread order — by step, then by shard — merged from the shards' logs
    // (each in step order); a step's epoch is that before its replacements.
    for (let from = 0; ; ) {
      let first = -1;
      let step = steps;
      for (let v = 0; v < shards; v++) {
        const at = base(shards, cap, v);
        if (next[v]! < words[at]! && words[at + PER_SHARD_HEAD + next[v]!]! < step) {
          first = v;
          step = words[at + PER_SHARD_HEAD + next[v]!]!;
        }
      }
      if (epochs !== null) epochs.fill(epoch, from, step + (first < 0 ? 0 : 1));
      if (first < 0) break;
      from = step + 1;
      this.history.push(words[base(shards, cap, first) + PER_SHARD_HEAD + cap + next[first]!]!);
      next[first]!++;
      epoch++;
    }
    this.epoch = epoch;
    this.history = this.history.filter((r) => r > rows - this.window);
  }
}

import { uniqueName } from './kafka-names.js';
import { createTopics } from './kafka-serve.js';

/** Topic and group names for one `serve` test. */
export interface ServeTopics {
  readonly events: string;
  readonly scores: string;
  readonly dead: string;
  readonly journal: string;
  readonly group: string;
}

export function serveTopics(): ServeTopics {
  const base = uniqueName('serve');
  return {
    events: `${base}-events`,
    scores: `${base}-scores`,
    dead: `${base}-dead`,
    journal: `${base}-journal`,
    group: `${base}-group`,
  };
}

/** The `kafka:` section of a test's shoal.yaml: quick fetches and rebalances, debug logs. */
export function kafkaSection(
  brokers: string,
  t: ServeTopics,
  extra: Record<string, unknown> = {},
): Record<string, unknown> {
  return {
    brokers: brokers.split(','),
    group: t.group,
    events: { topics: [t.events] },
    scores: { topic: t.scores },
    deadLetters: { topic: t.dead },
    journal: { topic: t.journal },
    maxWaitMs: 200,
    sessionTimeoutMs: 6000,
    log: { level: 'debug' },
    ...extra,
  };
}

/**
 * Create one serve test's topics: events (with `partitions`), scores, dead letters, journal, and `more`
 * (names of one-partition topics, or a mapping from name to partition count).
 */
export async function createServeTopics(
  brokers: string,
  t: ServeTopics,
  partitions = 1,
  more: readonly string[] | Readonly<Record<string, number>> = [],
): Promise<void> {
  const topics: Record<string, number> = {
    [t.events]: partitions,
    [t.scores]: 1,
    [t.dead]: 1,
    [t.journal]: 1,
  };
  if (Array.isArray(more)) for (const topic of more) topics[topic] = 1;
  else Object.assign(topics, more);
  await createTopics(brokers, topics);
}

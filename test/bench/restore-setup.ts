import { eventOptions } from '../../src/cli/serve.js';
import { ServeCheckpoints } from '../../src/cli/serve-checkpoints.js';
import { ServeModels } from '../../src/cli/serve-run.js';
import { type KafkaSettings, resolveKafkaSettings } from '../../src/kafka/index.js';
import { type RunConfig, resolveConfig } from '../../src/pipeline/index.js';

/**
 * What the restore benchmark and its child process share: the `replay` default ensemble (bagging ×10,
 * λ = 6, an ADWIN lifecycle per member: no `ensemble` in the configuration) with inline labels and ids,
 * served with `kafka.checkpoint.dir`, and the service's model side and checkpoints built from them (no
 * broker is contacted: nothing here connects).
 */
export const EVENTS_TOPIC = 'bench-events';
const RUN = { seed: 'bench-restore', inputs: { id: 'id', label: 'label' } };

export function restoreService(dir: string): {
  config: RunConfig;
  settings: KafkaSettings;
  models: ServeModels;
  checkpoints: ServeCheckpoints;
} {
  const config = resolveConfig(RUN, 'bench');
  const settings = resolveKafkaSettings(
    {
      brokers: ['127.0.0.1:9'],
      group: 'bench-restore',
      events: { topics: [EVENTS_TOPIC] },
      scores: { topic: 'bench-scores' },
      deadLetters: { topic: 'bench-dead' },
      checkpoint: { dir },
    },
    'bench',
  );
  const models = new ServeModels(config, settings, eventOptions(config, settings), 'bench', null, true);
  const checkpoints = new ServeCheckpoints(config, settings, 'bench', Date.now(), null);
  return { config, settings, models, checkpoints };
}

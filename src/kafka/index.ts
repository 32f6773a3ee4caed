/** Output messages and their topics, as the producer sends them. */
export type { Message as OutputMessage, TopicMessages as TopicOutputs } from 'kafkajs';
export { samePartitionAssigner } from './assigner.js';
export type { KafkaStoreOptions } from './checkpoint-store.js';
export { KafkaCheckpointStore } from './checkpoint-store.js';
export { createKafka } from './client.js';
export { registerCodecs } from './codecs.js';
export type { KafkaSettings, SaslMechanism, Scope, Secrets } from './config.js';
export { readSecrets, resolveKafkaSettings } from './config.js';
export type { Assignment, BatchControl, BatchHandler, FetchedBatch } from './consumer.js';
export { EventConsumer, restartsAfter } from './consumer.js';
export type { DeadLetter, DeadLetterCode, EventBatch } from './decode.js';
export { BatchDecoder } from './decode.js';
export type { LogLevelName } from './log.js';
export { createLogger } from './log.js';
export { deadLetterMessage, journalMessage, scoresMessage } from './messages.js';
export { OutputProducer } from './producer.js';
export { ensureTopics } from './topics.js';

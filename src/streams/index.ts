export type { GeneratedBlock, GeneratorState, StreamGenerator } from './generator.js';
export { take } from './generator.js';
export type { LedOptions } from './led.js';
export { LED_DEFAULTS, LED_SEGMENTS, led } from './led.js';
export type { SeaOptions } from './sea.js';
export { SEA_DEFAULTS, sea } from './sea.js';
export type { StaggerConcept, StaggerOptions } from './stagger.js';
export { STAGGER_DEFAULTS, stagger } from './stagger.js';

export type { DriftName, FreightOptions, FreightSnapshot, LegFacts, ScriptedDrift } from './freight.js';
export {
  CARRIERS,
  CLASSES,
  driftRows,
  FIRMWARE,
  FREIGHT_DEFAULTS,
  FREIGHT_SCHEMA,
  FreightScenario,
  OPERATOR,
  PRODUCT_CLASSES,
  SCRIPT,
  SITE_CODES,
  SITES,
  scriptedChanges,
} from './freight.js';

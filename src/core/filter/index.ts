/** Wrench filter: Butterworth design, multi-channel SOS cascade, tare, payload and impact split. */
export {
  BUTTERWORTH_MAX_ORDER,
  BUTTERWORTH_MAX_RATE_HZ,
  BUTTERWORTH_MIN_ORDER,
  BUTTERWORTH_MIN_RATE_HZ,
  SosCascade,
  analogPrototypePoles,
  butterworthSos,
  checkButterworthArgs,
  noiseCorrelationSamples,
  sosResponse,
  sosToTf,
} from './butterworth.js';
export type { ButterworthKeys } from './butterworth.js';
export {
  DEFAULT_WRENCH_FILTER,
  STANDARD_GRAVITY,
  TARE_NONE,
  TARE_REFUSED,
  TARE_REFUSAL_TEXT,
  TARE_TAKEN,
  WrenchFilter,
  checkWrenchFilterConfig,
  validateWrenchFilterConfig,
  wrenchFilterConfig,
} from './wrench-filter.js';
export type { WrenchFilterConfig, WrenchFilterOverrides } from './wrench-filter.js';

/** The loop classifier's public face: what src/site, src/daemon and src/cli may use. */
export { stepLoop, stepLoopAll } from './loopClassifier.js';
export type { LoopEffect, LoopInput } from './loopClassifier.js';
export { initialLoopClassifier, currentLoopState, lastPulseUs, loopStateSinceUs, isIntermittent } from './loopClassifierState.js';
export { DEFAULT_LOOP_SETTINGS, loopSettingsFromConfig } from './loopClassifierState.js';
export type { LoopClassifierState, LoopSettings } from './loopClassifierState.js';
export { emptyLineQuality, intervalFigures, takeQuality } from './lineQuality.js';
export type { LineQuality } from './lineQuality.js';

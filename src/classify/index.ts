export { initialLoopClassifier, currentLoopState, lastPulseUs, loopStateSinceUs, isIntermittent } from './loopClassifierState.js';
export type { LoopClassifierState } from './loopClassifierState.js';
export { stepLoop } from './stepLoop.js';
export { stepLoopAll } from './stepLoopAll.js';
export { takeQuality } from './takeQuality.js';
export { emptyLineQuality, intervalFigures } from './lineQuality.js';
export { DEFAULT_LOOP_SETTINGS, loopSettingsFromConfig } from './loopSettings.js';
export type { LoopSettings } from './loopSettings.js';
export type { LineQuality, LoopEffect, LoopInput } from './loopTypes.js';

/**
 * Not a concept of its own: src/store (lineQualityRepo, summarizeLineQuality) and its tests still import
 * LineQuality from here, and src/store is being reworked in parallel. When the store part of issue 15
 * lands, point those imports at './index.js' and delete this file. Nothing in src/classify uses it.
 */
export type { LineQuality } from './lineQuality.js';
export type { LoopEffect, LoopInput } from './loopClassifier.js';

export * from './alarmState.js';
export * from './band.js';
export * from './condition.js';
export * from './loopState.js';
export * from './decoderLink.js';
export * from './alarmStanding.js';

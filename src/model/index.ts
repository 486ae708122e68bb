export * from './hh';
export * from './cable';
export * from './nerve';
export { Rng } from './random';
export * from './refractory';
export * from './pulses';
export { makeGroupDemo, GROUP_DEMO_INTERVALS, GROUP_DEMO_DISTANCES, GROUP_DEMO_EFFECT } from './makeGroupDemo';
export type { GroupDemo, GroupDemoOptions } from './makeGroupDemo';
export { makeRecoveryDemo, RECOVERY_INTERVALS, RECOVERY_TRAIN_HZ } from './makeRecoveryDemo';

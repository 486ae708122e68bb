export * from './hh';
export * from './cable';
export * from './nerve';
export { Rng } from './random';
export * from './refractory';
export * from './pulses';

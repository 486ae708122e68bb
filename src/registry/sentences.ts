/**
 * The methods sentences of the registered analyses, by history verb. A leaf module (type imports only): the
 * registry (src/registry/index.ts) fills it when it loads, and the methods text (src/report/methods.ts) reads it,
 * so a result's methods() can word an analysis step without importing the analyses.
 */

import type { Step } from '../sweeps/SweepSet';

/** A methods sentence of one history step, and the references it cites (null: nothing to say). */
export type Sentence = (step: Step) => { text: string; refs?: readonly string[] } | null;

const sentences = new Map<string, Sentence>();

/** Register the sentence of a history verb (the registry does this for every analysis it lists). */
export function registerSentence(verb: string, f: Sentence): void {
  sentences.set(verb, f);
}

/** The sentence of a verb, or undefined when no registered analysis words it. */
export function sentenceFor(verb: string): Sentence | undefined {
  return sentences.get(verb);
}

/**
 * The wink-nlp instance with its English model. Loading the model takes a few hundred
 * milliseconds, so one instance is made at start-up and handed to the stages that need it.
 */
import winkNLP from 'wink-nlp';
import model from 'wink-eng-lite-web-model';

/** A loaded wink-nlp pipeline. */
export type Nlp = ReturnType<typeof winkNLP>;

// The model package's loader serialises its own module-level tables again on every load
// (JSON.stringify of what the last load left, a string whose escapes double each time), so
// a process that loads it a few dozen times fails with "Invalid string length". One
// instance per process (per thread) avoids that; reading documents does not change it.
let loaded: Nlp | null = null;

/** The process's wink-nlp with the lite English model (tokens, sentences, POS, lemmas, entities). */
export function createNlp(): Nlp {
  loaded ??= winkNLP(model);
  return loaded;
}

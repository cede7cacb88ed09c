/**
 * The wink-nlp instance with its English model. Loading the model takes a few hundred
 * milliseconds, so one instance is made at start-up and handed to the stages that need it.
 */
import winkNLP from 'wink-nlp';
import model from 'wink-eng-lite-web-model';

/** A loaded wink-nlp pipeline. */
export type Nlp = ReturnType<typeof winkNLP>;

/** Loads wink-nlp with the lite English model (tokens, sentences, POS, lemmas, entities). */
export function createNlp(): Nlp {
  return winkNLP(model);
}

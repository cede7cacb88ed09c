import { describe, expect, it } from 'vitest';
import { createNlp } from '../../src/text/nlp.js';

describe('the language model', () => {
  it('loads once per process however many runtimes ask for it', () => {
    // Loading the model package repeatedly grows its tables until JSON.stringify fails.
    const first = createNlp();
    for (let i = 0; i < 40; i++) expect(createNlp()).toBe(first);
    expect(first.readDoc('The levee failed.').sentences().length()).toBe(1);
  });
});

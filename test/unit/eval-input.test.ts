import { mkdtempSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { readEvalInput } from '../../src/eval/eval-input.js';
import { isStrandError } from '../../src/errors.js';

const dir = mkdtempSync(join(tmpdir(), 'strandline-evalin-'));
let n = 0;
function files(articles: string, gold: string, scope?: string) {
  n++;
  const a = join(dir, `a${n}.jsonl`);
  const g = join(dir, `g${n}.jsonl`);
  writeFileSync(a, articles);
  writeFileSync(g, gold);
  let s: string | undefined;
  if (scope !== undefined) writeFileSync((s = join(dir, `s${n}.jsonl`)), scope);
  return { articles: a, gold: g, scope: s };
}
const A1 = JSON.stringify({
  id: 'a1',
  outlet: 'O',
  published: '2026-10-05',
  title: 'T',
  sentences: ['The levee failed.', 'It rained.'],
  topic: 'floods',
  subtopic: 'levee',
});
const A2 = JSON.stringify({
  id: 'a2',
  outlet: 'P',
  published: null,
  title: 'U',
  sentences: ['The levee broke overnight.'],
  topic: null,
  subtopic: null,
});

async function problems(a: string, g: string, s?: string): Promise<string> {
  try {
    await readEvalInput(files(a, g, s));
  } catch (err) {
    expect(isStrandError(err, 'STRAND_EVAL_INPUT_INVALID')).toBe(true);
    return (err as Error).message;
  }
  throw new Error('expected the input to be refused');
}

describe('reading evaluation input', () => {
  it('reads articles, gold and scope, and dates bare days at noon UTC', async () => {
    const input = await readEvalInput(
      files(
        `${A1}\n${A2}\n`,
        '{"article":"a1","sentence":0,"event":"E1","text":"The levee failed."}\n{"article":"a2","sentence":0,"event":"E1"}\n',
        '{"article":"a1","sentence":0}\n',
      ),
    );
    expect(input.level).toBe('sentence');
    expect(input.articles[0]!.published).toBe('2026-10-05T12:00:00.000Z');
    expect(input.articles[1]!.published).toBeNull();
    expect([...input.scope!]).toEqual(['a1#0']);
  });

  it('recognises article-level gold', async () => {
    expect(
      (
        await readEvalInput(
          files(`${A1}\n${A2}`, '{"article":"a1","sentence":null,"event":"E"}\n{"article":"a2","sentence":null,"event":"E"}'),
        )
      ).level,
    ).toBe('article');
  });

  it.each([
    ['a line that is not JSON', `${A1}\n{"id": `, '{"article":"a1","sentence":0,"event":"E"}', /:2: not valid JSON/],
    ['a line that is an array', `${A1}\n[1]`, '{"article":"a1","sentence":0,"event":"E"}', /:2: must be a JSON object/],
    ['a duplicate article id', `${A1}\n${A1}`, '{"article":"a1","sentence":0,"event":"E"}', /duplicate article id "a1"/],
    [
      'sentences that are not strings',
      '{"id":"x","sentences":[1,2]}',
      '{"article":"x","sentence":0,"event":"E"}',
      /"sentences" must be an array of strings/,
    ],
    [
      'an unreadable date',
      '{"id":"x","published":"soon","sentences":["a"]}',
      '{"article":"x","sentence":0,"event":"E"}',
      /"published" must be RFC 3339/,
    ],
    ['gold for an unknown article', A1, '{"article":"nope","sentence":0,"event":"E"}', /unknown article "nope"/],
    ['a sentence index beyond the article', A1, '{"article":"a1","sentence":5,"event":"E"}', /sentence 5 is beyond the 2 sentences/],
    [
      'a negative or fractional index',
      A1,
      '{"article":"a1","sentence":-1,"event":"E"}\n{"article":"a1","sentence":0.5,"event":"E"}',
      /0-based index or null/,
    ],
    [
      'gold text that is not in its sentence',
      A1,
      '{"article":"a1","sentence":0,"event":"E","text":"Something else."}',
      /the text is not found in sentence 0/,
    ],
    [
      'a mix of sentence and article lines',
      `${A1}\n${A2}`,
      '{"article":"a1","sentence":0,"event":"E"}\n{"article":"a2","sentence":null,"event":"E"}',
      /mixes sentence-level lines and article-level lines/,
    ],
    ['no gold at all', A1, '\n', /no gold lines/],
    ['an empty event id', A1, '{"article":"a1","sentence":0,"event":""}', /"event" must be non-empty/],
  ])('refuses %s, naming the line', async (_name, a, g, message) => {
    expect(await problems(a, g)).toMatch(message);
  });

  it('refuses a scope line for an unknown article', async () => {
    expect(await problems(A1, '{"article":"a1","sentence":0,"event":"E"}', '{"article":"zz","sentence":0}')).toMatch(
      /unknown article "zz"/,
    );
  });

  it('reports every problem at once, up to twenty, then counts the rest', async () => {
    const gold = Array.from({ length: 30 }, (_, i) => `{"article":"missing${i}","sentence":0,"event":"E"}`).join('\n');
    const message = await problems(A1, gold);
    // Thirty unknown articles, and then no valid gold line at all.
    expect(message).toMatch(/has 31 problem\(s\)/);
    expect(message).toMatch(/and 11 more/);
  });

  it('ignores __proto__ keys in lines', async () => {
    const input = await readEvalInput(
      files('{"id":"x","sentences":["a"],"__proto__":{"polluted":1}}', '{"article":"x","sentence":0,"event":"E","__proto__":{"x":1}}'),
    );
    expect(({} as Record<string, unknown>).polluted).toBeUndefined();
    expect(input.articles).toHaveLength(1);
  });

  it('refuses a file over the size limit and a missing file', async () => {
    await expect(readEvalInput(files(A1, '{"article":"a1","sentence":0,"event":"E"}'), 10)).rejects.toThrow(/over the 10-byte limit/);
    await expect(readEvalInput({ articles: join(dir, 'nope.jsonl'), gold: join(dir, 'nope2.jsonl') })).rejects.toThrow(
      /cannot read .*nope\.jsonl: ENOENT/,
    );
  });
});

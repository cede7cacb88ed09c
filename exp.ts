import { parseConfig } from './src/config/load-config.js';
import { checkEvalInput, readEvalInput, type EvalInput } from './src/eval/eval-input.js';
import { demoEvalInput } from './src/eval/demo-input.js';
import { prepareMentions, selector, toArticles } from './src/eval/prepare-mentions.js';
import { linkPrepared } from './src/eval/run-eval.js';
import { onlineCentroid } from './src/eval/baselines.js';
import { scorePartitions } from './src/eval/partition-metrics.js';
import { createNlp } from './src/text/nlp.js';
import { syntheticStream } from './src/bench/synthetic-stream.js';
import { DEMO_DIR } from './src/cli/common.js';
const nlp = createNlp();
const config = parseConfig({});
const corpora: [string, EvalInput][] = [
  ['demo', await demoEvalInput(nlp, DEMO_DIR, config)],
  ['meantime', await readEvalInput({ articles: '../shared/data/meantime-en/articles.jsonl', gold: '../shared/data/meantime-en/gold.jsonl' })],
  ['synthetic', checkEvalInput(syntheticStream(3000, 5))],
];
const part = (c: Map<string, string[]>) => { const by = new Map<string, string[]>(); for (const [k, v] of c) by.set(v[0]!, [...(by.get(v[0]!) ?? []), k]); return [...by.values()]; };
const prepared = corpora.map(([name, input]) => {
  const p = prepareMentions(nlp, toArticles(input, name, '2030-01-01T00:00:00Z'), selector(input, 'gold'), 0.5, 20);
  const gold = new Map<string, string[]>(); for (const g of input.gold) { const k = `${g.article}#${g.sentence}`; if (!gold.has(k)) gold.set(k, [g.event]); }
  return { name, p, key: part(gold) };
});
const variants = JSON.parse(process.argv[2] ?? '[{}]');
for (const { name, p, key } of prepared) {
  const base = scorePartitions(key, part(onlineCentroid(p, 0.2, 7))).conllF1;
  const row = variants.map((v: any) => (scorePartitions(key, part(linkPrepared(p, { ...config.link, ...v }))).conllF1 * 100).toFixed(1));
  console.log(name.padEnd(10), 'baseline', (base * 100).toFixed(1), '|', row.join('  '));
}

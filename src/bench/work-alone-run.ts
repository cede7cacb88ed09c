/**
 * Child process of the worker-scaling bench: does one worker's work alone, with no Redis,
 * and prints the seconds it took. Run once alone and twice side by side, it shows how much
 * a second process can add on this machine at all (the ceiling for the worker rows).
 *
 *   node work-alone-run.js analysis <copies>            analyse and detect the demo
 *   node work-alone-run.js model <model folder> <copies> embed the demo's event sentences
 */
import { parseConfig } from '../config/load-config.js';
import { detectMentions } from '../detect/detect-mentions.js';
import { TransformerEmbedder } from '../embed/transformer-embedder.js';
import { readReplayInput } from '../ingest/replay-source.js';
import { DEMO_FEEDS } from '../cli/common.js';
import { analyseArticle } from '../text/analyse-article.js';
import { createNlp } from '../text/nlp.js';

const [kind, a, b] = process.argv.slice(2);
const config = parseConfig({});
const articles = (await readReplayInput([DEMO_FEEDS], config.ingest)).articles;
const nlp = createNlp();
if (kind === 'analysis') {
  const copies = Number(a);
  for (const x of articles) analyseArticle(nlp, x);
  const t0 = performance.now();
  for (let k = 0; k < copies; k++) for (const x of articles) detectMentions(analyseArticle(nlp, x), config.detect.threshold);
  process.stdout.write(`${(performance.now() - t0) / 1000}\n`);
} else {
  const copies = Number(b);
  const mentions = articles.flatMap((x) => detectMentions(analyseArticle(nlp, x), config.detect.threshold).mentions);
  const embedder = await TransformerEmbedder.load(a!, config.embed.batchSize, 1);
  await embedder.embed(mentions.slice(0, 32));
  const t0 = performance.now();
  for (let k = 0; k < copies; k++) await embedder.embed(mentions);
  process.stdout.write(`${(performance.now() - t0) / 1000}\n`);
}

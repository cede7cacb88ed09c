/** The evaluation report as terminal tables. */
import { type CorpusReport, type EvalReport, MULTI_EVENT_NOTE, type SettingResult } from './eval-report.js';

const pct = (x: number): string => (x * 100).toFixed(1);
const signed = (x: number): string => `${x >= 0 ? '+' : ''}${(x * 100).toFixed(1)}`;

/** A plain-text rendering of the report; `sweep` adds each corpus's threshold table. */
export function formatReport(r: EvalReport, o: { sweep?: boolean } = {}): string {
  const c = r.configuration;
  const out: string[] = [
    `Strandline evaluation: ${r.corpora.length} corpus(es); link threshold ${c.linkThreshold} (cross-story + ${c.crossStoryMargin}), story threshold ${c.storyThreshold}, half-life ${c.halfLifeDays} days, detect threshold ${c.detectThreshold}`,
    `best thresholds and regret over ${r.thresholds[0]} to ${r.thresholds.at(-1)} (${r.thresholds.length} points)`,
    '',
  ];
  for (const corpus of r.corpora) out.push(...corpusSection(corpus, Boolean(o.sweep)), '');
  if (r.corpora.length > 0) out.push(...overallSection(r), '');
  out.push('Scores are percentages. Regret: the best score over the thresholds minus the score at the configured one. ' + r.primaryRule);
  return out.join('\n');
}

function corpusSection(corpus: CorpusReport, sweep: boolean): string[] {
  const i = corpus.input;
  const out = [
    `== ${corpus.name}: ${i.articles} articles, ${i.goldLines} gold lines, ${i.goldEvents} gold events, ${i.level}-level gold, ${i.dated ? 'dated' : 'undated'}${i.scoped ? ', scored within the given scope' : ''}`,
    ...(i.multiEventMentions > 0
      ? [`${i.multiEventMentions} of ${i.goldMentions} gold mentions carry several events: ${MULTI_EVENT_NOTE}`]
      : []),
  ];
  for (const s of corpus.settings) out.push(...settingTable(s, i.subtopics), ...(sweep ? sweepTable(s) : []));
  return out;
}

function settingTable(s: SettingResult, subtopics: boolean): string[] {
  const linker = s.systems.find((x) => x.kind === 'linker')!;
  const head = [
    `${s.setting === 'gold' ? 'Gold mentions' : 'Predicted mentions'}: ${s.goldMentions} gold, ${s.systemMentions} linked by the system; text stage ${s.textSeconds.toFixed(2)} s, link stage ${linker.seconds.toFixed(2)} s`,
    `linker: CoNLL ${pct(linker.partition.conllF1)}, best ${pct(linker.best!.conll.value)} at ${linker.best!.conll.threshold} (regret ${pct(linker.best!.conll.regret)}); extended B3 ${pct(linker.extendedBcubed.f1)}, best ${pct(linker.best!.extendedB3.value)} at ${linker.best!.extendedB3.threshold} (regret ${pct(linker.best!.extendedB3.regret)})`,
  ];
  if (s.stories)
    head.push(
      `stories: ${s.stories.stories} for ${s.stories.articles} articles against ${s.stories.groups} ${s.stories.against} groups${s.stories.against === 'topic' ? ' (topics are coarser than stories)' : ''}: CoNLL ${pct(s.stories.partition.conllF1)}, B3 ${pct(s.stories.partition.b3.f1)}`,
    );
  if (s.detection)
    head.push(`Event-sentence detection: P ${pct(s.detection.precision)}  R ${pct(s.detection.recall)}  F1 ${pct(s.detection.f1)}`);
  if (s.rejected.length)
    head.push(
      `${s.rejected.length} article(s) rejected: ${s.rejected
        .slice(0, 3)
        .map((x) => `${x.article} (${x.reason})`)
        .join('; ')}`,
    );
  const cross = subtopics ? ['same story', 'cross-story'] : ['across art.'];
  const cols = [
    'system',
    'MUC',
    'B3',
    'CEAFe',
    'LEA',
    'BLANC',
    'CoNLL',
    'ext-B3',
    'best CoNLL',
    'best ext-B3',
    'within art.',
    ...cross,
    'events',
    'seconds',
  ];
  const rows = s.systems.map((x) => [
    x.name,
    pct(x.partition.muc.f1),
    pct(x.partition.b3.f1),
    pct(x.partition.ceafe.f1),
    pct(x.partition.lea.f1),
    pct(x.partition.blanc.f1),
    pct(x.partition.conllF1),
    pct(x.extendedBcubed.f1),
    x.best ? `${pct(x.best.conll.value)}@${x.best.conll.threshold}` : '-',
    x.best ? `${pct(x.best.extendedB3.value)}@${x.best.extendedB3.threshold}` : '-',
    pairCell(x.pairwise.withinArticle),
    ...(subtopics ? [pairCell(x.pairwise.sameStory), pairCell(x.pairwise.crossStory)] : [pairCell(x.pairwise.crossArticle)]),
    String(x.events),
    x.seconds.toFixed(3),
  ]);
  const widths = cols.map((c, i) => Math.max(c.length, ...rows.map((r) => r[i]!.length)));
  const line = (cells: string[]) => cells.map((c, i) => (i === 0 ? c.padEnd(widths[i]!) : c.padStart(widths[i]!))).join('  ');
  return [
    ...head,
    line(cols),
    widths.map((w) => '-'.repeat(w)).join('  '),
    ...rows.map(line),
    'Link-type columns: pairwise link precision / recall / F1. Baselines run on plain TF-IDF vectors (unigrams).',
  ];
}

function sweepTable(s: SettingResult): string[] {
  return [
    `Threshold sweep (${s.setting} mentions): threshold  CoNLL F1 (online baseline)  ext-B3 F1 (online baseline)  pairwise P / R / F1`,
    ...s.sweep.map(
      (p) =>
        `  ${p.threshold.toFixed(3)}  ${pct(p.conllF1).padStart(5)} (${pct(p.baseline.conllF1).padStart(5)})  ${pct(p.extendedB3F1).padStart(5)} (${pct(p.baseline.extendedB3F1).padStart(5)})  ${pct(p.pairwise.precision).padStart(5)} / ${pct(p.pairwise.recall).padStart(5)} / ${pct(p.pairwise.f1).padStart(5)}`,
    ),
  ];
}

function overallSection(r: EvalReport): string[] {
  const out = ['== Across corpora'];
  for (const o of r.overall) {
    out.push(
      `${o.setting} mentions, ${o.corpora} corpus(es): mean CoNLL ${pct(o.meanConll)}, mean extended B3 ${pct(o.meanExtendedB3)}; largest regret CoNLL ${pct(o.maxRegretConll)}, extended B3 ${pct(o.maxRegretExtendedB3)}`,
    );
    out.push(
      `  the linker at its threshold minus the online baseline at the baseline's best threshold: ${o.versusBaseline.map((v) => `${v.corpus} CoNLL ${signed(v.conll)}, ext-B3 ${signed(v.extendedB3)}`).join('; ')}`,
    );
  }
  return out;
}

function pairCell(p: { precision: number; recall: number; f1: number; goldPairs: number; systemPairs: number }): string {
  if (p.goldPairs === 0 && p.systemPairs === 0) return '-';
  return `${pct(p.precision)}/${pct(p.recall)}/${pct(p.f1)}`;
}

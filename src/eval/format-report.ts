/** The evaluation report as a terminal table. */
import { type EvalReport, MULTI_EVENT_NOTE, type SettingResult } from './run-eval.js';

const pct = (x: number): string => (x * 100).toFixed(1);

/** A plain-text rendering of the report. */
export function formatReport(r: EvalReport): string {
  const out: string[] = [
    `Strandline evaluation of ${r.source}`,
    `${r.input.articles} articles, ${r.input.goldLines} gold lines, ${r.input.goldEvents} gold events, ${r.input.level}-level gold${r.input.scoped ? ', scored within the given scope' : ''}`,
    `link threshold ${r.configuration.linkThreshold}, half-life ${r.configuration.halfLifeDays} days, detect threshold ${r.configuration.detectThreshold}`,
    ...(r.input.multiEventMentions > 0 ? [`${r.input.multiEventMentions} of ${r.input.goldMentions} gold mentions carry several events: ${MULTI_EVENT_NOTE}`] : []),
    '',
  ];
  for (const s of r.settings) out.push(...settingTable(s, r.input.subtopics), '');
  if (r.sweep) {
    out.push(`Threshold sweep (${r.sweep.setting} mentions): threshold  CoNLL F1 (online baseline)  ext-B3 F1 (online baseline)  pairwise P / R / F1`);
    for (const p of r.sweep.points) {
      out.push(`  ${p.threshold.toFixed(3)}  ${pct(p.conllF1).padStart(5)} (${pct(p.baseline.conllF1).padStart(5)})  ${pct(p.extendedB3F1).padStart(5)} (${pct(p.baseline.extendedB3F1).padStart(5)})  ${pct(p.pairwise.precision).padStart(5)} / ${pct(p.pairwise.recall).padStart(5)} / ${pct(p.pairwise.f1).padStart(5)}`);
    }
    out.push('');
  }
  out.push('Scores are percentages. ' + r.primaryRule);
  return out.join('\n');
}

function settingTable(s: SettingResult, subtopics: boolean): string[] {
  const head = [
    `${s.setting === 'gold' ? 'Gold mentions' : 'Predicted mentions'}: ${s.goldMentions} gold, ${s.systemMentions} linked by the system; pipeline ${s.pipelineSeconds.toFixed(2)} s`,
  ];
  if (s.detection) head.push(`Event-sentence detection: P ${pct(s.detection.precision)}  R ${pct(s.detection.recall)}  F1 ${pct(s.detection.f1)}`);
  if (s.rejected.length) head.push(`${s.rejected.length} article(s) rejected: ${s.rejected.slice(0, 3).map((x) => `${x.article} (${x.reason})`).join('; ')}`);
  const cross = subtopics ? ['same story', 'cross-story'] : ['across art.'];
  const cols = ['system', 'MUC', 'B3', 'CEAFe', 'LEA', 'BLANC', 'CoNLL', 'ext-B3', 'within art.', ...cross, 'events', 'seconds'];
  const rows = s.systems.map((x) => [
    x.name, pct(x.partition.muc.f1), pct(x.partition.b3.f1), pct(x.partition.ceafe.f1), pct(x.partition.lea.f1), pct(x.partition.blanc.f1),
    pct(x.partition.conllF1), pct(x.extendedBcubed.f1), pairCell(x.pairwise.withinArticle),
    ...(subtopics ? [pairCell(x.pairwise.sameStory), pairCell(x.pairwise.crossStory)] : [pairCell(x.pairwise.crossArticle)]),
    String(x.events), x.seconds.toFixed(3),
  ]);
  const widths = cols.map((c, i) => Math.max(c.length, ...rows.map((r) => r[i]!.length)));
  const line = (cells: string[]) => cells.map((c, i) => (i === 0 ? c.padEnd(widths[i]!) : c.padStart(widths[i]!))).join('  ');
  return [...head, line(cols), widths.map((w) => '-'.repeat(w)).join('  '), ...rows.map(line), 'Link-type columns: pairwise link precision / recall / F1.'];
}

function pairCell(p: { precision: number; recall: number; f1: number; goldPairs: number; systemPairs: number }): string {
  if (p.goldPairs === 0 && p.systemPairs === 0) return '-';
  return `${pct(p.precision)}/${pct(p.recall)}/${pct(p.f1)}`;
}

/**
 * The evaluation report as one self-contained HTML file (no scripts, no outside
 * resources), with the threshold sweep drawn as an inline SVG chart.
 */
import { type EvalReport, MULTI_EVENT_NOTE, type SweepPoint } from './eval-report.js';

const esc = (s: string): string => s.replace(/&/g, '&amp;').replace(/</g, '&lt;').replace(/>/g, '&gt;').replace(/"/g, '&quot;');
const pct = (x: number): string => (x * 100).toFixed(1);

/** Renders the report as HTML. */
export function htmlReport(r: EvalReport): string {
  const corpora = r.corpora
    .map((corpus) => {
      const i = corpus.input;
      const settings = corpus.settings
        .map((s) => {
          const linker = s.systems.find((x) => x.kind === 'linker')!;
          const rows = s.systems
            .map(
              (x) =>
                `<tr${x.kind === 'linker' ? ' class="ours"' : ''}><th>${esc(x.name)}</th>${[
                  x.partition.muc,
                  x.partition.b3,
                  x.partition.ceafm,
                  x.partition.ceafe,
                  x.partition.lea,
                  x.partition.blanc,
                ]
                  .map((m) => `<td title="R ${pct(m.recall)} P ${pct(m.precision)}">${pct(m.f1)}</td>`)
                  .join(
                    '',
                  )}<td><b>${pct(x.partition.conllF1)}</b></td><td>${pct(x.extendedBcubed.f1)}</td><td>${x.best ? `${pct(x.best.conll.value)} at ${x.best.conll.threshold}` : '–'}</td>${(
                  ['withinArticle', 'crossArticle', 'sameStory', 'crossStory'] as const
                )
                  .map(
                    (k) =>
                      `<td>${x.pairwise[k].goldPairs + x.pairwise[k].systemPairs === 0 ? '–' : `${pct(x.pairwise[k].precision)} / ${pct(x.pairwise[k].recall)} / ${pct(x.pairwise[k].f1)}`}</td>`,
                  )
                  .join('')}<td>${x.events}</td><td>${x.seconds.toFixed(3)}</td></tr>`,
            )
            .join('\n');
          return `<h3>${s.setting === 'gold' ? 'Gold mentions' : 'Predicted mentions'}</h3>
<p>${s.goldMentions} gold mentions; ${s.systemMentions} linked by the system; text stage ${s.textSeconds.toFixed(2)} s, link stage ${linker.seconds.toFixed(2)} s.${s.detection ? ` Event-sentence detection: precision ${pct(s.detection.precision)}, recall ${pct(s.detection.recall)}, F1 ${pct(s.detection.f1)}.` : ''}
The linker's best CoNLL F1 is ${pct(linker.best!.conll.value)} at ${linker.best!.conll.threshold} (regret ${pct(linker.best!.conll.regret)}); its best extended BCubed ${pct(linker.best!.extendedB3.value)} at ${linker.best!.extendedB3.threshold} (regret ${pct(linker.best!.extendedB3.regret)}).
${s.stories ? `Stories: ${s.stories.stories} for ${s.stories.articles} articles against ${s.stories.groups} ${esc(s.stories.against)} groups: CoNLL ${pct(s.stories.partition.conllF1)}.` : ''}</p>
<table><thead><tr><th>system</th><th>MUC</th><th>B3</th><th>CEAF-m</th><th>CEAF-e</th><th>LEA</th><th>BLANC</th><th>CoNLL</th><th>ext. B3</th><th>best CoNLL</th><th>within article</th><th>across articles</th><th>same story</th><th>cross-story</th><th>events</th><th>seconds</th></tr></thead>
<tbody>${rows}</tbody></table>
${sweepChart(s.sweep, r.configuration.linkThreshold)}`;
        })
        .join('\n');
      return `<h2>${esc(corpus.name)}</h2>
<p>${esc(corpus.source)}: ${i.articles} articles, ${i.goldLines} gold lines, ${i.goldEvents} gold events, ${i.level}-level gold, ${i.dated ? 'dated' : 'undated'}${i.scoped ? ', scored within the given scope' : ''}.</p>
${i.multiEventMentions > 0 ? `<p class="note">${i.multiEventMentions} of ${i.goldMentions} gold mentions carry several events: ${esc(MULTI_EVENT_NOTE)}</p>` : ''}
${settings}`;
    })
    .join('\n');
  const overall = r.overall
    .map(
      (o) =>
        `<p><b>${o.setting} mentions</b>, ${o.corpora} corpus(es): mean CoNLL ${pct(o.meanConll)}, mean extended BCubed ${pct(o.meanExtendedB3)}; largest regret: CoNLL ${pct(o.maxRegretConll)}, extended BCubed ${pct(o.maxRegretExtendedB3)}. The linker at its threshold minus the online baseline at the baseline's best threshold: ${o.versusBaseline.map((v) => `${esc(v.corpus)} CoNLL ${signed(v.conll)}, ext-B3 ${signed(v.extendedB3)}`).join('; ')}.</p>`,
    )
    .join('\n');
  return `<!doctype html>
<html lang="en"><head><meta charset="utf-8"><title>Strandline evaluation</title>
<style>
body{font:15px/1.45 system-ui,sans-serif;margin:2rem;color:#1d232b;max-width:1200px}
table{border-collapse:collapse;margin:.5rem 0 1.5rem;font-size:.9rem}th,td{border-bottom:1px solid #d9dee4;padding:.3rem .5rem;text-align:right}
th:first-child{text-align:left}tr.ours{background:#eef4fb}.note{color:#5c6773;font-size:.88rem}
</style></head><body>
<h1>Strandline evaluation</h1>
<p>Run ${esc(r.created)}. Link threshold ${r.configuration.linkThreshold} (another story's events + ${r.configuration.crossStoryMargin}), story threshold ${r.configuration.storyThreshold}, half-life ${r.configuration.halfLifeDays} days; best thresholds and regret over ${r.thresholds[0]} to ${r.thresholds.at(-1)}.</p>
<p class="note">F1 scores in percent (hover a cell for recall and precision). Link-type columns give pairwise link precision / recall / F1. Regret: the best score over the thresholds minus the score at the configured one. Baselines run on plain TF-IDF vectors (unigrams). ${esc(r.primaryRule)}</p>
${corpora}
${r.corpora.length ? `<h2>Across corpora</h2>${overall}` : ''}
<p class="note">Automatic links are machine suggestions; scores here describe how often they agree with human annotation on these inputs, not on any other.</p>
</body></html>
`;
}

const signed = (x: number): string => `${x >= 0 ? '+' : ''}${(x * 100).toFixed(1)}`;

/** Precision, recall and F1 (pairwise) and CoNLL F1 against the threshold, as SVG. */
export function sweepChart(points: readonly SweepPoint[], current: number): string {
  const W = 640;
  const H = 320;
  const m = { l: 48, r: 130, t: 16, b: 40 };
  const xs = points.map((p) => p.threshold);
  const x0 = Math.min(...xs);
  const x1 = Math.max(...xs);
  const X = (t: number) => m.l + ((t - x0) / (x1 - x0 || 1)) * (W - m.l - m.r);
  const Y = (v: number) => H - m.b - v * (H - m.t - m.b);
  const series: [string, string, (p: SweepPoint) => number][] = [
    ['pairwise precision', '#1f5fa8', (p) => p.pairwise.precision],
    ['pairwise recall', '#c0392b', (p) => p.pairwise.recall],
    ['pairwise F1', '#2e8b57', (p) => p.pairwise.f1],
    ['CoNLL F1', '#7a5600', (p) => p.conllF1],
    ['extended B3 F1', '#6b3fa0', (p) => p.extendedB3F1],
    ['baseline CoNLL F1', '#b8a06a', (p) => p.baseline.conllF1],
  ];
  const lines = series
    .map(
      ([name, color, f], i) =>
        `<polyline fill="none" stroke="${color}" stroke-width="2" points="${points.map((p) => `${X(p.threshold).toFixed(1)},${Y(f(p)).toFixed(1)}`).join(' ')}"/><text x="${W - m.r + 8}" y="${m.t + 14 + i * 18}" fill="${color}" font-size="12">${name}</text>`,
    )
    .join('');
  const ticks = [0, 0.25, 0.5, 0.75, 1]
    .map(
      (v) =>
        `<line x1="${m.l}" x2="${W - m.r}" y1="${Y(v)}" y2="${Y(v)}" stroke="#e5e8ec"/><text x="${m.l - 6}" y="${Y(v) + 4}" font-size="11" text-anchor="end">${v}</text>`,
    )
    .join('');
  const xticks = xs
    .filter((_, i) => i % 2 === 0)
    .map((t) => `<text x="${X(t)}" y="${H - m.b + 16}" font-size="11" text-anchor="middle">${t}</text>`)
    .join('');
  const marker =
    current >= x0 && current <= x1
      ? `<line x1="${X(current)}" x2="${X(current)}" y1="${m.t}" y2="${H - m.b}" stroke="#888" stroke-dasharray="4 3"/><text x="${X(current) + 4}" y="${m.t + 10}" font-size="11" fill="#555">configured</text>`
      : '';
  return `<svg xmlns="http://www.w3.org/2000/svg" width="${W}" height="${H}" viewBox="0 0 ${W} ${H}" role="img" aria-label="Scores against the link threshold">${ticks}${xticks}${marker}${lines}<text x="${(m.l + W - m.r) / 2}" y="${H - 6}" font-size="12" text-anchor="middle">link threshold</text></svg>`;
}

/**
 * A synthetic news stream with known gold, for benchmarks only (never for correctness
 * claims): invented people, organisations and places, events of a dozen kinds, and
 * sentences that report them in varied wording (several templates, synonyms, optional
 * details), arriving in articles over the days after each event, mixed with background
 * sentences. Seeded, so the same size always gives the same stream.
 */
import type { EvalArticle, GoldLine } from '../eval/eval-input.js';
import { seededRandom as rng } from '../seeded-random.js';

/** A generated stream: articles with pre-split sentences, and the gold. */
export interface SyntheticStream {
  articles: EvalArticle[];
  gold: GoldLine[];
}

interface Kind {
  verbs: string[];
  nouns: string[];
  objects: string[];
}

const KINDS: Kind[] = [
  {
    verbs: ['destroyed', 'gutted', 'swept through', 'burned down'],
    nouns: ['fire', 'blaze', 'inferno'],
    objects: ['warehouse', 'depot', 'mill', 'market hall'],
  },
  {
    verbs: ['arrested', 'detained', 'took into custody', 'held'],
    nouns: ['arrest', 'detention'],
    objects: ['suspect', 'driver', 'trader', 'official'],
  },
  {
    verbs: ['collapsed', 'gave way', 'fell', 'caved in'],
    nouns: ['collapse', 'failure'],
    objects: ['bridge', 'roof', 'embankment', 'tower'],
  },
  {
    verbs: ['flooded', 'inundated', 'swamped', 'submerged'],
    nouns: ['flood', 'flooding', 'deluge'],
    objects: ['village', 'district', 'valley', 'harbour'],
  },
  {
    verbs: ['approved', 'passed', 'adopted', 'backed'],
    nouns: ['vote', 'approval'],
    objects: ['budget', 'tax law', 'housing plan', 'port levy'],
  },
  {
    verbs: ['walked out', 'went on strike', 'stopped work', 'downed tools'],
    nouns: ['strike', 'walkout', 'stoppage'],
    objects: ['dockworkers', 'nurses', 'drivers', 'miners'],
  },
  {
    verbs: ['resigned', 'stepped down', 'quit', 'left office'],
    nouns: ['resignation', 'departure'],
    objects: ['minister', 'mayor', 'chairman', 'director'],
  },
  {
    verbs: ['convicted', 'found guilty', 'sentenced', 'jailed'],
    nouns: ['verdict', 'conviction', 'ruling'],
    objects: ['commissioner', 'banker', 'contractor', 'clerk'],
  },
  {
    verbs: ['rescued', 'saved', 'pulled out', 'airlifted'],
    nouns: ['rescue', 'airlift'],
    objects: ['passengers', 'climbers', 'fishermen', 'families'],
  },
  {
    verbs: ['signed', 'agreed', 'sealed', 'struck'],
    nouns: ['deal', 'agreement', 'accord'],
    objects: ['trade deal', 'ceasefire', 'merger', 'contract'],
  },
  { verbs: ['attacked', 'raided', 'stormed', 'ransacked'], nouns: ['attack', 'raid'], objects: ['bank', 'office', 'checkpoint', 'depot'] },
  {
    verbs: ['derailed', 'crashed', 'overturned', 'collided'],
    nouns: ['crash', 'derailment', 'collision'],
    objects: ['train', 'bus', 'ferry', 'lorry'],
  },
];

const WEEKDAYS = ['Sunday', 'Monday', 'Tuesday', 'Wednesday', 'Thursday', 'Friday', 'Saturday'];
const SYLLABLES = [
  'var',
  'nek',
  'dos',
  'tal',
  'mir',
  'ena',
  'kol',
  'bra',
  'ste',
  'lun',
  'orv',
  'ik',
  'tes',
  'sam',
  'und',
  'hal',
  'ber',
  'qui',
  'ron',
  'vel',
  'ash',
  'tor',
  'mel',
  'dri',
  'gan',
  'pel',
  'sor',
  'yat',
  'wen',
  'cas',
];
const BACKGROUND = [
  'The area has a long history of industry and trade.',
  'Officials say such cases are rare.',
  'It is not the first time questions have been raised.',
  'Many residents say they want answers.',
  'The council is expected to discuss the matter next month.',
  'Critics argue that more should have been done.',
];

/** Generates a stream with about `mentions` event sentences. */
export function syntheticStream(mentions: number, seed = 1): SyntheticStream {
  const rand = rng(seed);
  const pick = <T>(xs: readonly T[]): T => xs[Math.floor(rand() * xs.length)]!;
  const word = (n: number) => {
    let w = '';
    for (let i = 0; i < n; i++) w += pick(SYLLABLES);
    return w[0]!.toUpperCase() + w.slice(1);
  };
  const people = Array.from({ length: Math.max(50, mentions / 4) }, () => `${word(2)} ${word(2)}`);
  const places = Array.from({ length: Math.max(30, mentions / 20) }, () => word(2 + Math.floor(rand() * 2)));
  const orgs = Array.from(
    { length: Math.max(20, mentions / 40) },
    () => `${word(2)} ${pick(['Holdings', 'Council', 'Union', 'Authority', 'Group'])}`,
  );
  const outlets = Array.from({ length: 12 }, (_, i) => `Synthetic Outlet ${i + 1}`);
  const start = Date.parse('2030-01-01T00:00:00Z');
  const DAY = 86_400_000;

  // Events, each with its own participants, place, day and number of mentions.
  type Ev = {
    id: string;
    kind: Kind;
    person: string;
    org: string;
    place: string;
    day: number;
    object: string;
    count: number;
    left: number;
  };
  const events: Ev[] = [];
  let planned = 0;
  let day = 0;
  while (planned < mentions) {
    const count = 1 + Math.floor(Math.pow(rand(), 2) * 8);
    const kind = pick(KINDS);
    events.push({
      id: `syn-${events.length}`,
      kind,
      person: pick(people),
      org: pick(orgs),
      place: pick(places),
      day,
      object: pick(kind.objects),
      count,
      left: count,
    });
    planned += count;
    if (rand() < 0.3) day++;
  }

  const sentence = (e: Ev, reportDay: number): string => {
    const when =
      reportDay === e.day
        ? 'on ' + WEEKDAYS[new Date(start + e.day * DAY).getUTCDay()]
        : reportDay - e.day <= 6
          ? `on ${WEEKDAYS[new Date(start + e.day * DAY).getUTCDay()]}`
          : `earlier this ${reportDay - e.day < 28 ? 'month' : 'year'}`;
    const n = 2 + Math.floor(rand() * 40);
    const templates = [
      () => `${e.person} said the ${pick(e.kind.nouns)} at the ${e.object} in ${e.place} happened ${when}.`,
      () => `The ${e.object} in ${e.place} was ${pick(e.kind.verbs)} ${when}, ${e.org} said.`,
      () => `${e.org} confirmed that ${n} people were affected when the ${e.object} was ${pick(e.kind.verbs)} in ${e.place}.`,
      () => `In ${e.place}, ${e.person} described how the ${e.object} ${pick(e.kind.verbs)} ${when}.`,
      () => `The ${pick(e.kind.nouns)} in ${e.place} ${when} involved the ${e.object} and ${e.org}.`,
      () => `Witnesses said the ${e.object} ${pick(e.kind.verbs)} shortly after ${e.person} arrived in ${e.place}.`,
    ];
    return pick(templates)();
  };

  const articles: EvalArticle[] = [];
  const gold: GoldLine[] = [];
  let cursor = 0;
  let made = 0;
  while (made < mentions && cursor < events.length) {
    // An article reports a few open events from the recent past, plus background.
    const reportDay = events[cursor]!.day + Math.floor(rand() * 3);
    const sentences: string[] = [];
    const id = `synthetic-${articles.length}`;
    const open = events.slice(cursor, cursor + 6).filter((e) => e.left > 0);
    const k = Math.min(open.length, 2 + Math.floor(rand() * 4));
    for (let i = 0; i < k && made < mentions; i++) {
      const e = open[i]!;
      if (rand() < 0.35) sentences.push(pick(BACKGROUND));
      gold.push({ article: id, sentence: sentences.length, event: e.id });
      sentences.push(sentence(e, Math.max(reportDay, e.day)));
      e.left--;
      made++;
    }
    while (cursor < events.length && events[cursor]!.left === 0) cursor++;
    articles.push({
      id,
      outlet: pick(outlets),
      published: new Date(start + reportDay * DAY + Math.floor(rand() * DAY)).toISOString(),
      title: `Report ${articles.length}`,
      sentences,
      topic: null,
      subtopic: null,
    });
  }
  return { articles, gold };
}

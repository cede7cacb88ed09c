/**
 * The online linker: each new mention is scored against a small candidate set of events
 * (never the whole history), joins the best one at or above the threshold, or opens a new
 * event. A sentence may also join further events when they score clearly above the
 * threshold (a ruling that recalls the hearings before it), and a sentence that points
 * back at a happening ("the move") links to the best of its article's earlier events.
 *
 * Planning is separate from applying: plan() works on copies and returns what would
 * change; the caller commits that to the store and only then calls apply(). A failed
 * commit leaves the linker exactly as it was. Over 350 lines because planning a link,
 * applying it and planning merges share the linker's private indexes and tallies.
 */
import type { EmbeddedMention, Link, LinkEvidence } from '../records.js';
import type { LinkTally, SharedLink } from '../store/store.js';
import { ApartGroups, pairKey } from './apart-groups.js';
import { Calibration, type CalibrationOptions } from './calibration.js';
import { CandidateIndex, type WeightedKey } from './candidate-index.js';
import { CentroidIndex } from './centroid-index.js';
import {
  addMention,
  centroidCosine,
  cloneEvent,
  eventIdFor,
  type EventState,
  linkWeight,
  mergeStates,
  nameKey,
  openEvent,
  removeMention,
  topTermFeatures,
} from './event-state.js';
import { type MentionFeatures, mentionFeatures, scoreCandidate, type ScoredCandidate } from './score-candidate.js';
import { planSplit, type SplitMember, type SplitPlan } from './split-event.js';

export { eventIdFor } from './event-state.js';

/** Linker settings (see config schema for defaults and reasons). */
export interface LinkerOptions {
  /** The link threshold before calibration (calibration.ts). */
  threshold: number;
  calibration: CalibrationOptions;
  halfLifeDays: number;
  maxCandidates: number;
  postingLimit: number;
  lookupTerms: number;
  overlapWeight: number;
  secondaryMargin: number;
  centroidTerms: number;
  /** Dense centroids are searched exactly up to this many events, approximately beyond. */
  annAbove: number;
  /** Consolidation splits an event whose two parts score below this (centroid cosine x time decay). */
  splitThreshold: number;
  /** Events with fewer mentions are not examined for a split; 0 turns splitting off. */
  splitMinMentions: number;
  /** Posting entries read per lookup at most, rarest keys first. */
  lookupBudget: number;
  /** An event of another story than the mention's article, sharing no name with it, needs threshold + this to be linked. */
  crossStoryMargin: number;
  /** Scores grow with the event's size: x (1 + sizePrior x ln mentions), at most x3. */
  sizePrior: number;
  /** Events the mention's own article opened score this share. */
  sameArticleFactor: number;
  /** A sentence pointing back at a happening ("the move") also links to its article's best earlier event. */
  backReferences: boolean;
}

/** A mention that reached an event's outlet list for the first time. */
export interface OutletAdded {
  eventId: string;
  outlet: string;
  articleId: string;
  sentenceIndex: number;
  score: number;
  /** False when the mention comes from a verbatim copy of another outlet's article. */
  independent: boolean;
}

/** What linking one article's mentions would change. */
export interface LinkPlan {
  links: Link[];
  /** New versions of every event touched, opened ones included. */
  events: EventState[];
  opened: string[];
  outletsAdded: OutletAdded[];
  /** What the plan adds to the linker's calibration tally. */
  tally: LinkTally;
}

const MAX_LINKS_PER_SENTENCE = 3;
const RECENT_VOTE = 0.05;

/** Online clustering of mentions into events. */
export class OnlineLinker {
  private readonly events = new Map<string, EventState>();
  private index: CandidateIndex;
  private centroids: CentroidIndex;
  /** The latest touch number given to an event (EventState.touched); restored from the store. */
  private clock = 0;
  /** Name key → its index key (negative; term keys are their hashed features, non-negative). */
  private names = new Map<string, number>();
  /** How many events carry a name now (the rarity of a shared name). */
  private readonly carriersOf = (name: string): number => {
    const key = this.names.get(name);
    return key === undefined ? 0 : this.index.eventsWith(key);
  };

  private calibration: Calibration;
  /** The operator's adjustment of the threshold (corrections log), kept across reset(). */
  private thresholdOffset = 0;
  /** Pairs of events an analyst set apart (`a\nb`, ordered), never merged again by consolidation. */
  private apart = new Set<string>();
  /** Sentences an analyst placed (`article#index`), never moved by consolidation's splits. */
  private pinned = new Set<string>();

  constructor(private readonly o: LinkerOptions) {
    this.index = new CandidateIndex(o.postingLimit);
    this.centroids = new CentroidIndex(o.annAbove);
    this.calibration = new Calibration(o.threshold, o.calibration);
  }

  /** Forgets everything (before load() from the store after a failed commit). */
  reset(): void {
    this.events.clear();
    this.index = new CandidateIndex(this.o.postingLimit);
    this.centroids = new CentroidIndex(this.o.annAbove);
    this.clock = 0;
    this.names = new Map();
    this.calibration = new Calibration(this.o.threshold, this.o.calibration);
    this.calibration.setOffset(this.thresholdOffset);
  }

  /** Moves the link threshold by the operator's adjustment in effect (0: as configured). */
  setThresholdOffset(offset: number): void {
    this.thresholdOffset = offset;
    this.calibration.setOffset(offset);
  }

  /** The adjustment in effect. */
  get thresholdAdjustment(): number {
    return this.thresholdOffset;
  }

  /**
   * Rebuilds the in-memory state from stored events in the order the linker touched them,
   * so the index is the one the running linker held (candidate-index.ts), and the
   * calibration tally stored with them.
   */
  load(states: Iterable<EventState>, tally: LinkTally = { mentions: 0, high: 0 }): void {
    this.calibration.load(tally);
    const sorted = [...states].sort(
      (a, b) => a.touched - b.touched || (a.lastSeen < b.lastSeen ? -1 : a.lastSeen > b.lastSeen ? 1 : a.id < b.id ? -1 : 1),
    );
    for (const e of sorted) {
      this.events.set(e.id, e);
      this.register(e);
      this.clock = Math.max(this.clock, e.touched);
    }
  }

  /** Indexes an event under the keys of its current state. */
  private register(e: EventState): void {
    const keys = topTermFeatures(e, this.o.lookupTerms * 2);
    for (const k of e.participants.keys()) keys.push(this.nameKeyOf(k));
    for (const k of e.places.keys()) keys.push(this.nameKeyOf(k));
    this.index.register(e.id, keys, e.touched);
    if (e.dense) this.centroids.upsert(e.id, e.dense);
  }

  /** The index key of a name, given on first sight. */
  private nameKeyOf(name: string): number {
    let key = this.names.get(name);
    if (key === undefined) this.names.set(name, (key = -(this.names.size + 1)));
    return key;
  }

  /** A mention's lookup keys: its highest-weighted (rarest) terms and its names. */
  private mentionKeys(m: EmbeddedMention): WeightedKey[] {
    const keys: WeightedKey[] = [];
    const v = m.vector;
    if (v.kind === 'sparse') {
      const order = [...v.indices.keys()].sort((a, b) => v.values[b]! - v.values[a]! || v.indices[a]! - v.indices[b]!);
      for (const i of order.slice(0, this.o.lookupTerms)) keys.push({ key: v.indices[i]!, weight: v.values[i]! });
    }
    for (const p of new Set([...m.participants, ...m.places].map(nameKey))) {
      // A name no event carries has no posting to read.
      const key = p === '' ? undefined : this.names.get(p);
      if (key !== undefined) keys.push({ key, weight: 0.5 });
    }
    return keys;
  }

  /** Number of events held. */
  get size(): number {
    return this.events.size;
  }

  /** The link threshold the next mention meets (calibrated on the stream unless fixed). */
  get threshold(): number {
    return this.calibration.threshold();
  }

  /** Number of index keys, for statistics. */
  get indexKeys(): number {
    return this.index.keys;
  }

  /**
   * Works out the links for one article's mentions without changing committed state.
   * `story` is the article's story: events of other stories need a higher score; `resolve`
   * gives the story an event's story id now lives in (stories merge).
   */
  plan(mentions: readonly EmbeddedMention[], story: string | null = null, resolve: (storyId: string) => string = (id) => id): LinkPlan {
    const overlay = new Map<string, EventState>();
    const opened: string[] = [];
    const links: Link[] = [];
    const outletsAdded: OutletAdded[] = [];
    const current = (id: string): EventState | undefined => overlay.get(id) ?? this.events.get(id);
    const tally: LinkTally = { mentions: 0, high: 0 };
    // The events this article's sentences linked to so far, for the back-references of later ones.
    const told: string[] = [];

    for (const m of mentions) {
      const mkeys = this.mentionKeys(m);
      const ids = new Set(this.index.lookup(mkeys, this.o.maxCandidates, RECENT_VOTE, this.o.lookupBudget));
      if (m.vector.kind === 'dense') for (const id of this.centroids.nearest(m.vector.values, this.o.maxCandidates)) ids.add(id);
      for (const id of opened) ids.add(id);
      const total = this.events.size + opened.length;
      const features = mentionFeatures(m);
      const scored: ScoredCandidate[] = [];
      for (const id of ids) {
        const e = current(id);
        if (e) scored.push(scoreCandidate(features, e, this.carriersOf, total, this.o, opened.includes(id)));
      }
      scored.sort((a, b) => b.score - a.score || (a.event.id < b.event.id ? -1 : 1));
      // The threshold as the stream so far sets it, then this mention joins the tally.
      const threshold = this.calibration.threshold(tally);
      tally.mentions++;
      if (this.calibration.isHigh(scored[0]?.score ?? 0)) tally.high++;

      const chosen: { sc: ScoredCandidate | null; id: string }[] = [];
      let nearest: LinkEvidence['nearest'];
      // The bar a candidate must clear: higher for an event of another story that shares
      // no name with the sentence (a shared participant or place is the stronger evidence
      // that lets a link cross stories).
      const bar = (sc: ScoredCandidate): number => {
        const cross = story !== null && sc.event.story !== null && resolve(sc.event.story) !== story;
        if (cross) sc.evidence.crossStory = true;
        const named = sc.evidence.sharedParticipants.length + sc.evidence.sharedPlaces.length > 0;
        sc.evidence.bar = threshold + (cross && !named ? this.o.crossStoryMargin : 0);
        return sc.evidence.bar;
      };
      const eligible = scored.filter((sc) => sc.score >= bar(sc));
      const best = eligible[0];
      if (best) {
        chosen.push({ sc: best, id: best.event.id });
        for (const sc of eligible.slice(1)) {
          if (chosen.length >= MAX_LINKS_PER_SENTENCE || sc.score < bar(sc) + this.o.secondaryMargin) break;
          chosen.push({ sc, id: sc.event.id });
        }
      } else {
        const top = scored[0];
        if (top) nearest = { eventId: top.event.id, score: top.score, bar: bar(top) };
        const id = eventIdFor(m);
        const e = openEvent(id, m);
        e.story = story;
        overlay.set(id, e);
        opened.push(id);
        chosen.push({ sc: null, id });
      }

      if (this.o.backReferences && m.refersBack && chosen.length < MAX_LINKS_PER_SENTENCE) {
        const back = this.backReference(features, told, chosen, current, total, opened);
        if (back) chosen.push({ sc: back, id: back.event.id });
      }
      for (const { id } of chosen) if (!told.includes(id)) told.push(id);

      chosen.forEach(({ sc, id }, rank) => {
        const refersBack = sc?.evidence.refersBack === true;
        let e = overlay.get(id);
        if (!e) {
          e = cloneEvent(this.events.get(id)!);
          overlay.set(id, e);
        }
        const hadOutlet = e.outlets.has(m.outlet);
        addMention(e, m, linkWeight({ rank, refersBack }), this.o.centroidTerms);
        const score = sc ? sc.score : m.eventness;
        links.push({
          articleId: m.articleId,
          sentenceIndex: m.sentenceIndex,
          eventId: id,
          score,
          rank,
          evidence: sc
            ? sc.evidence
            : {
                similarity: 1,
                timeDecay: 1,
                timeGapDays: 0,
                sharedParticipants: [],
                sharedPlaces: [],
                overlapBonus: 0,
                opened: true,
                ...(nearest ? { nearest } : {}),
              },
        });
        if (!hadOutlet && sc && !refersBack)
          outletsAdded.push({
            eventId: id,
            outlet: m.outlet,
            articleId: m.articleId,
            sentenceIndex: m.sentenceIndex,
            score,
            independent: !m.isCopy,
          });
      });
    }
    // Touch numbers in plan order; they are stored with the events.
    for (const e of overlay.values()) e.touched = ++this.clock;
    return { links, events: [...overlay.values()], opened, outletsAdded, tally };
  }

  /**
   * For a sentence that points back at a happening ("the move"): the best-scoring of the
   * events its article's earlier sentences linked to, other than those it links to already,
   * if it shares anything with it (score above 0). The link leaves the event's state as it
   * is (linkWeight), so a wrong guess costs one link, never the event.
   */
  private backReference(
    f: MentionFeatures,
    told: readonly string[],
    chosen: readonly { id: string }[],
    current: (id: string) => EventState | undefined,
    total: number,
    opened: readonly string[],
  ): ScoredCandidate | null {
    let best: ScoredCandidate | null = null;
    for (const id of told) {
      const e = current(id);
      if (!e || chosen.some((c) => c.id === id)) continue;
      // An event the article joined rather than opened is scored as from any other article.
      const sc = scoreCandidate(f, e, this.carriersOf, total, this.o, opened.includes(id));
      if (sc.score > 0 && (!best || sc.score > best.score)) best = sc;
    }
    if (best) best.evidence.refersBack = true;
    return best;
  }

  /**
   * Consolidation: finds events that turn out to be one. Each event touched since the
   * last pass looks up its candidates in the index (as a mention would, with its centroid
   * as the query) and pairs scoring at least `mergeThreshold` (cosine of the centroids x
   * the time decay between their spans) are merged, the older event absorbing the newer.
   * Returns the merges without applying them.
   */
  planMerges(eventIds: Iterable<string>, mergeThreshold: number): MergePlan[] {
    const merges: MergePlan[] = [];
    const gone = new Set<string>();
    const apart = new ApartGroups(this.apart);
    for (const id of eventIds) {
      const e = this.events.get(id);
      if (!e || gone.has(id)) continue;
      const keys = topTermFeatures(e, this.o.lookupTerms * 2).map((key) => ({ key, weight: 1 }));
      const others = new Set(this.index.lookup(keys, this.o.maxCandidates, 0));
      if (e.dense) for (const x of this.centroids.nearest(Float32Array.from(e.dense), this.o.maxCandidates)) others.add(x);
      for (const other of others) {
        if (other === id || gone.has(other) || apart.keptApart(id, other)) continue;
        const f = this.events.get(other);
        if (!f) continue;
        const sim = centroidCosine(e, f);
        const gap = Math.max(0, f.timeStart - e.timeEnd, e.timeStart - f.timeEnd);
        const score = sim * Math.pow(0.5, gap / this.o.halfLifeDays);
        if (score < mergeThreshold) continue;
        const [into, from] = e.firstSeen <= f.firstSeen ? [e, f] : [f, e];
        merges.push({ into: into.id, from: from.id, score });
        gone.add(from.id);
        apart.merged(from.id, into.id);
        if (from.id === id) break;
      }
    }
    return merges;
  }

  /**
   * The merged state of `into` after absorbing `from` (neither is changed). `shared` are the
   * mentions linked to both: the merge keeps one link of each (the better-scoring one,
   * `into`'s on a tie), so the other comes back out and each counts once.
   */
  mergedState(into: string, from: string, shared: readonly SharedLinks[] = []): EventState {
    const merged = mergeStates(this.events.get(into)!, this.events.get(from)!, this.o.centroidTerms);
    for (const s of shared) {
      const [toInto, toFrom] = s.links;
      const dropped = toFrom.score > toInto.score ? toInto : toFrom;
      removeMention(merged, s.mention, linkWeight(dropped));
    }
    merged.touched = ++this.clock;
    return merged;
  }

  /** Applies a committed merge: the absorbed event leaves, the survivor takes its keys. */
  applyMerge(merged: EventState, from: string): void {
    // Events set apart from the absorbed one are now apart from the survivor.
    for (const pair of [...this.apart]) {
      const [a, b] = pair.split('\n') as [string, string];
      if (a !== from && b !== from) continue;
      this.apart.delete(pair);
      this.apart.add(pairKey(a === from ? merged.id : a, b === from ? merged.id : b));
    }
    this.events.delete(from);
    this.index.remove(from);
    this.centroids.remove(from);
    this.events.set(merged.id, merged);
    this.register(merged);
  }

  /**
   * The events among `ids` worth examining for a split: big enough, and grown by half (at
   * least splitMinMentions mentions) since they were last examined, so that a long-running
   * event is read back a logarithmic number of times, not at every pass. Marks them
   * examined (EventState.splitCheckedAt); the caller stores the marks of those that are not
   * split, so that a restarted linker examines what an uninterrupted one would.
   */
  splitCandidates(ids: Iterable<string>): string[] {
    const out: string[] = [];
    const min = this.o.splitMinMentions;
    if (min <= 0) return out;
    for (const id of ids) {
      const e = this.events.get(id);
      if (!e || e.mentionCount < min) continue;
      const last = e.splitCheckedAt;
      if (last >= 0 && e.mentionCount < Math.max(last + min, last * 1.5)) continue;
      e.splitCheckedAt = e.mentionCount;
      out.push(id);
    }
    return out;
  }

  /** The current state of an event (for storing an examination mark), or undefined. */
  event(id: string): EventState | undefined {
    return this.events.get(id);
  }

  /** Divides an event whose mentions drifted apart (see split-event.ts), or null. Changes nothing. */
  planSplit(id: string, members: readonly SplitMember[]): SplitPlan | null {
    const e = this.events.get(id);
    const plan = e ? planSplit(e, members, this.o) : null;
    if (plan) {
      for (const part of [plan.kept, plan.split]) {
        part.splitCheckedAt = part.mentionCount;
        part.touched = ++this.clock;
      }
    }
    return plan;
  }

  /** Applies a committed split: the event takes its smaller self, the new event joins the index. */
  applySplit(plan: SplitPlan): void {
    for (const e of [plan.kept, plan.split]) {
      this.events.set(e.id, e);
      this.register(e);
    }
  }

  /** The events filed under `story` (their own story followed through merges by `resolve`), by id. */
  eventsInStory(story: string, resolve: (id: string) => string): EventState[] {
    return [...this.events.values()].filter((e) => e.story !== null && resolve(e.story) === story).sort((a, b) => (a.id < b.id ? -1 : 1));
  }

  /** An event's state filed under another story (a story split moved it); changes nothing. */
  movedState(id: string, story: string): EventState {
    const e = cloneEvent(this.events.get(id)!);
    e.story = story;
    e.version++;
    e.touched = ++this.clock;
    return e;
  }

  /** Applies committed moves of events to another story. */
  applyMoves(states: readonly EventState[]): void {
    for (const e of states) {
      this.events.set(e.id, e);
      this.register(e);
    }
  }

  /** What analysts' corrections bind (link/corrections.ts): events kept apart, sentences kept where placed. */
  setBinds(apart: readonly (readonly [string, string])[], pinned: readonly { articleId: string; sentenceIndex: number }[]): void {
    this.apart = new Set(apart.map(([a, b]) => pairKey(a, b)));
    this.pinned = new Set(pinned.map((k) => `${k.articleId}#${k.sentenceIndex}`));
  }

  /** True when an analyst placed this sentence (consolidation leaves it where it is). */
  isPinned(k: { articleId: string; sentenceIndex: number }): boolean {
    return this.pinned.has(`${k.articleId}#${k.sentenceIndex}`);
  }

  /** Marks a state as changed now (its place in the candidate order), before it is committed. */
  stamp(e: EventState): void {
    e.touched = ++this.clock;
  }

  /** Applies a committed correction: the written events replace theirs, the removed leave. */
  applyCorrection(written: readonly EventState[], removed: readonly string[]): void {
    for (const id of removed) {
      this.events.delete(id);
      this.index.remove(id);
      this.centroids.remove(id);
    }
    for (const e of written) {
      this.events.set(e.id, e);
      this.register(e);
      this.clock = Math.max(this.clock, e.touched);
    }
  }

  /** Makes a committed plan part of the linker's state. */
  apply(plan: LinkPlan): void {
    for (const e of plan.events) {
      this.events.set(e.id, e);
      this.register(e);
    }
    this.calibration.add(plan.tally);
  }
}

/** A mention linked to both events of a merge, with its link to `into` and to `from`. */
export interface SharedLinks {
  mention: Parameters<typeof removeMention>[1];
  links: readonly [SharedLink, SharedLink];
}

/** One merge found by consolidation. */
export interface MergePlan {
  into: string;
  from: string;
  score: number;
}

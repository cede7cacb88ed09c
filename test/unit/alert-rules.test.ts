import { describe, expect, it } from 'vitest';
import { type AlertRuleInput, EVERYTHING, firstMatch, ruleWithDefaults } from '../../src/notify/alert-rules.js';

const event = {
  id: 'ev_1',
  label: 'Dock workers at Korrin Bay walked out over pay',
  firstSeen: '2026-10-05T08:00:00.000Z',
  participants: ['Korrin Bay Dockers Union'],
  places: ['Korrin Bay'],
  outlets: ['Harbour Ledger', 'The Vellmouth Courier', 'EBS News'],
};
/** An "event.outlet_added" as the linker writes it: the event after the report, the outlet, the mention. */
function outletAdded(
  over: { outlets?: string[]; outlet?: string; independent?: boolean; independentOutlets?: number; published?: string } = {},
): string {
  return JSON.stringify({
    type: 'event.outlet_added',
    timestamp: '2026-10-05T12:00:00.000Z',
    data: {
      event: { ...event, outlets: over.outlets ?? event.outlets },
      outlet: over.outlet ?? 'EBS News',
      independent: over.independent ?? true,
      independentOutlets: over.independentOutlets ?? (over.outlets ?? event.outlets).length,
      mention: {
        article: 'a9',
        sentence: 0,
        text: 'The strike at the docks entered its second day.',
        published: over.published ?? '2026-10-05T12:00:00.000Z',
      },
    },
  });
}
const storyOpened = JSON.stringify({
  type: 'story.opened',
  data: {
    story: { id: 'st_1', label: 'Flooding in Dunvessel', names: ['Dunvessel', 'Mara Quell'] },
    article: { title: 'Flooding in Dunvessel', outlet: 'Harbour Ledger' },
  },
});
const rule = (r: AlertRuleInput) => ruleWithDefaults(r);

describe('alert rules', () => {
  it('selects everything with no condition, and nothing with no rule', () => {
    expect(firstMatch([EVERYTHING], 'event.outlet_added', outletAdded())).toBe('everything');
    expect(firstMatch([], 'event.outlet_added', outletAdded())).toBeNull();
  });

  it('names the first rule in order that selects the notification', () => {
    const rules = [rule({ name: 'stories', types: ['story.opened'] }), rule({ name: 'dock news', words: ['strike', 'DOCKS'] }), EVERYTHING];
    expect(firstMatch(rules, 'event.outlet_added', outletAdded())).toBe('dock news');
    expect(firstMatch(rules, 'story.opened', storyOpened)).toBe('stories');
    expect(firstMatch(rules.slice(1, 2), 'story.opened', storyOpened)).toBeNull();
  });

  it('selects by participant, place and outlet, ignoring case', () => {
    expect(firstMatch([rule({ name: 'p', participants: ['korrin bay dockers union'] })], 'event.outlet_added', outletAdded())).toBe('p');
    expect(firstMatch([rule({ name: 'p', participants: ['Mara Quell'] })], 'event.outlet_added', outletAdded())).toBeNull();
    expect(firstMatch([rule({ name: 'p', participants: ['Mara Quell'] })], 'story.opened', storyOpened)).toBe('p');
    expect(firstMatch([rule({ name: 'w', places: ['Korrin Bay', 'Dunvessel'] })], 'event.outlet_added', outletAdded())).toBe('w');
    expect(firstMatch([rule({ name: 'o', outlets: ['EBS News'] })], 'event.outlet_added', outletAdded())).toBe('o');
    expect(firstMatch([rule({ name: 'o', outlets: ['Harbour Ledger'] })], 'event.outlet_added', outletAdded())).toBeNull();
    expect(firstMatch([rule({ name: 'o', outlets: ['Harbour Ledger'] })], 'story.opened', storyOpened)).toBe('o');
  });

  it('leaves out copies when asked', () => {
    const r = [rule({ name: 'independent', independentOnly: true })];
    expect(firstMatch(r, 'event.outlet_added', outletAdded({ independent: false }))).toBeNull();
    expect(firstMatch(r, 'event.outlet_added', outletAdded())).toBe('independent');
  });

  it('selects an event once, at the independent report that brings it to N independent outlets within the window', () => {
    const r = [rule({ name: 'spreading', minOutlets: 3, withinHours: 24 })];
    // A copy does not count, nor does a report that leaves the count where it was.
    expect(firstMatch(r, 'event.outlet_added', outletAdded({ independent: false, independentOutlets: 3 }))).toBeNull();
    expect(firstMatch(r, 'event.outlet_added', outletAdded({ outlets: ['A', 'B', 'C', 'D'], independentOutlets: 2 }))).toBeNull();
    expect(firstMatch(r, 'event.outlet_added', outletAdded({ outlets: ['A', 'B'] }))).toBeNull();
    expect(firstMatch(r, 'event.outlet_added', outletAdded())).toBe('spreading');
    expect(firstMatch(r, 'event.outlet_added', outletAdded({ outlets: ['A', 'B', 'C', 'D'] }))).toBeNull();
    expect(firstMatch(r, 'event.outlet_added', outletAdded({ published: '2026-10-07T12:00:00.000Z' }))).toBeNull();
    expect(firstMatch(r, 'event.opened', outletAdded())).toBeNull();
  });

  it('selects an event once, at the article that brings it to M mentions within the window', () => {
    const linked = (mentionCount: number, mentionsAdded: number, published = '2026-10-05T20:00:00.000Z') =>
      JSON.stringify({
        type: 'article.linked',
        data: {
          article: { article: 'a9', outlet: 'EBS News', published },
          events: [
            { id: 'ev_2', firstSeen: event.firstSeen, mentionCount: 3, mentionsAdded: 1 },
            { id: event.id, firstSeen: event.firstSeen, mentionCount, mentionsAdded },
          ],
        },
      });
    const r = [rule({ name: 'busy', minMentions: 10, withinHours: 48 })];
    expect(firstMatch(r, 'article.linked', linked(9, 2))).toBeNull();
    expect(firstMatch(r, 'article.linked', linked(11, 2))).toBe('busy');
    expect(firstMatch(r, 'article.linked', linked(10, 1))).toBe('busy');
    expect(firstMatch(r, 'article.linked', linked(12, 1))).toBeNull();
    expect(firstMatch(r, 'article.linked', linked(10, 1, '2026-10-09T00:00:00.000Z'))).toBeNull();
    expect(firstMatch(r, 'event.outlet_added', outletAdded())).toBeNull();
  });

  it('selects nothing from a body that is not JSON', () => {
    expect(firstMatch([EVERYTHING], 'event.opened', '{not json')).toBeNull();
  });
});

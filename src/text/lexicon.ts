/**
 * Word lists the text stage counts. The event list holds lemmas of verbs and nouns that
 * news uses to report happenings (common practice in event-detection work: trigger
 * lexicons built from annotation guidelines such as ACE 2005's event types); it is a cue,
 * not a gate, so it errs on the side of breadth.
 */

/** Lemmas that usually denote a happening. */
export const EVENT_WORDS = new Set(
  `
abandon accept accident acquire acquit adjourn admit adopt agree agreement aid air alight announce appeal appear appoint approve
arrest arrive arson assault attack attempt auction award ban bankrupt beat bid block blast blaze bomb break breach bribe
burn burst buy call campaign cancel capture carry catch ceasefire charge clash close collapse collide collision conclude confirm
convict conviction crash cut damage deal death debate declare defeat delay deliver demolish demolition deny deploy deport derail
destroy detain die disaster discharge discover dismiss dispute divert drop drown earthquake elect election end erupt escape evacuate
evacuation examine execute explode explosion fail fall file find fire flee flood force found free gather give go hand hang hear
hearing heckle hijack hire hit hold hurt impose inaugurate increase injure injury inspect inspection investigate investigation
issue jail kidnap kill land launch lay leak leave lift list lose march meet meeting merge murder name nominate occupy offer open
order oust overturn pass pay plead pledge present protest publish pull punish quit raid raise rally reach reject release relocate
remand remove reopen replace report rescue resign resignation resume retire return reveal riot rise rob rule ruling sack search
seize sell sentence set shoot shut sign sink smash spill split stab start stop storm strike sue suspend suspension table take talk
test testify threaten topple trial vote walk walkout warn warning win withdraw wound
`
    .trim()
    .split(/\s+/),
);

/**
 * Nouns that name a happening without saying which: in "the move", "this decision" the
 * reader must look back to know what happened (common practice in event coreference:
 * definite and demonstrative noun phrases with an event head are anaphors of an event
 * reported earlier in the text). Event words (above) refer back the same way ("the deal").
 */
export const GENERAL_EVENT_NOUNS = new Set(['move', 'decision', 'announcement', 'incident', 'event', 'action', 'plan', 'step']);

/** Determiners that make a noun phrase point at something the reader already knows. */
export const BACK_POINTING_DETERMINERS = new Set(['the', 'this', 'that', 'these', 'those']);

/** Modal and future markers: the sentence speaks of what may or will happen. */
export const MODAL_WORDS = new Set(['will', 'would', 'could', 'should', 'must', 'may', 'might', 'shall', "'ll", 'wo']);

/** Phrases that mark a scheduled or expected happening, not a reported one. */
export const FUTURE_PHRASES =
  /\b(?:is|are|was|were) (?:expected|due|scheduled|set|likely|going) to\b|\bplans? to\b|\bnext (?:week|month|year|spring|summer|autumn|winter)\b|\bwill\b/i;

/** Markers of opinion and argument. */
export const OPINION_WORDS = new Set([
  'believe',
  'think',
  'opinion',
  'ought',
  'mistake',
  'arguably',
  'surely',
  'perhaps',
  'hopefully',
  'frankly',
  'clearly',
  'seem',
  'must',
  'should',
]);

/** Prepositions after which a proper-noun phrase is usually a place. */
export const LOCATIVE = new Set([
  'in',
  'at',
  'near',
  'outside',
  'across',
  'into',
  'from',
  'towards',
  'toward',
  'beside',
  'around',
  'through',
  'over',
  'below',
  'above',
  'upstream',
  'downstream',
]);

/** Proper nouns that are dates, not participants. */
export const CALENDAR_WORDS = new Set([
  'monday',
  'tuesday',
  'wednesday',
  'thursday',
  'friday',
  'saturday',
  'sunday',
  'january',
  'february',
  'march',
  'april',
  'may',
  'june',
  'july',
  'august',
  'september',
  'october',
  'november',
  'december',
  'jan.',
  'feb.',
  'mar.',
  'apr.',
  'jun.',
  'jul.',
  'aug.',
  'sep.',
  'sept.',
  'oct.',
  'nov.',
  'dec.',
  'christmas',
  'easter',
]);

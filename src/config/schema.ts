/**
 * The configuration schema: every option with its default and why. Validated once at
 * start-up by load-config.ts, then frozen and passed down explicitly. Over 350 lines
 * because it is the one place an operator's every option is defined and explained.
 */
import { z } from 'zod';
import { NetworkGuard, WEBHOOK_NAMES, parseNetworks } from '../ingest/network-guard.js';
import { NOTIFICATION_TYPES } from '../notify/notification-types.js';

/** CIDR networks (or single addresses) an operator opens despite the private-network refusal. */
const networkList = z
  .array(z.string().min(1).max(100))
  .max(256)
  .default([])
  .superRefine((list, ctx) => {
    try {
      parseNetworks(list);
    } catch (err) {
      ctx.addIssue({ code: 'custom', message: (err as Error).message });
    }
  });

const nameList = z.array(z.string().min(1).max(200)).max(64).optional();

/** One alert rule (notify/alert-rules.ts): which notifications a subscriber receives. */
const alertRuleSchema = z
  .strictObject({
    /** Named in each delivery the rule selects. */
    name: z.string().min(1).max(100),
    /** Notification types it selects. Default: all. */
    types: z.array(z.enum(NOTIFICATION_TYPES)).min(1).optional(),
    /** Words that must all appear in the label, the sentence or the headline. */
    words: z.array(z.string().min(1).max(100)).max(16).optional(),
    /** At least one must be among the participants (or a story's names). */
    participants: nameList,
    /** At least one must be among the places (or a story's names). */
    places: nameList,
    /** Only reports by these outlets. */
    outlets: nameList,
    /** Leave out reports that are copies of another article. */
    independentOnly: z.boolean().optional(),
    /** Select an event at the report that brings it to this many outlets. */
    minOutlets: z.number().int().min(2).max(10_000).optional(),
    /** With minOutlets: only within this many hours of the event's first report. */
    withinHours: z
      .number()
      .min(1)
      .max(24 * 366)
      .optional(),
  })
  .refine((r) => r.withinHours === undefined || r.minOutlets !== undefined, {
    message: 'withinHours needs minOutlets',
    path: ['withinHours'],
  });

const subscriberSchema = z.strictObject({
  /** Name used in logs and the API. */
  name: z.string().min(1).max(100),
  /** Where signed POSTs go. */
  url: z.url({ protocol: /^https?$/ }),
  /** Standard Webhooks secret: `whsec_` followed by base64 (24 to 64 bytes). */
  secret: z.string().regex(/^whsec_[A-Za-z0-9+/]{32,88}={0,2}$/, 'must be whsec_ followed by base64'),
  /** Which notifications to send. Default: all. */
  types: z
    .array(z.enum(NOTIFICATION_TYPES))
    .min(1)
    .default([...NOTIFICATION_TYPES]),
  /** Alert rules, tried in order; the first that selects a notification is named in its delivery. Default: one rule selecting `types`. */
  rules: z
    .array(alertRuleSchema)
    .min(1)
    .max(32)
    .optional()
    .refine((rules) => !rules || new Set(rules.map((r) => r.name)).size === rules.length, 'rule names must differ'),
});

/** The full configuration. */
export const configSchema = z.strictObject({
  server: z
    .strictObject({
      /** Interface to listen on. Default 127.0.0.1 (local only). Env HOST overrides. */
      host: z.string().min(1).default('127.0.0.1'),
      /** TCP port. Default 7410. Env PORT overrides; 0 picks a free port. */
      port: z.number().int().min(0).max(65535).default(7410),
      /**
       * Bearer tokens the API accepts (32 to 512 printable characters each; generate them,
       * e.g. `openssl rand -base64 32`). Default none: nothing is checked, fit for the
       * loopback default only. Env STRANDLINE_API_TOKEN adds one.
       */
      tokens: z
        .array(
          z
            .string()
            .min(32)
            .max(512)
            .regex(/^[\x21-\x7e]+$/, 'printable ASCII without spaces'),
        )
        .max(32)
        .default([]),
      /** With tokens: `changes` (POST, PUT, PATCH, DELETE need one) or `everything` (reads of /api/ too). Default changes. */
      protect: z.enum(['changes', 'everything']).default('changes'),
      /**
       * Requests one client may make a minute, per api process (a client is its bearer token
       * when it sends one, else its address); beyond it, 429 with Retry-After. Default 600
       * (ten a second: the page and a busy script stay well under it); 0 turns it off.
       */
      requestsPerMinute: z.number().int().min(0).default(600),
      /**
       * Origins whose pages may call the API from a browser (CORS), e.g.
       * `https://desk.example`; `*` allows any. Default none: only the page the server serves.
       */
      corsOrigins: z.array(z.union([z.literal('*'), z.url({ protocol: /^https?$/ })])).default([]),
    })
    .prefault({}),
  store: z
    .strictObject({
      /** sqlite: one process, one file. redis: several processes and machines share the state. Default sqlite. */
      kind: z.enum(['sqlite', 'redis']).default('sqlite'),
      /** SQLite file path, relative to the working directory. Default data/strandline.sqlite. Env STRANDLINE_DB overrides. */
      path: z.string().min(1).default('data/strandline.sqlite'),
      redis: z
        .strictObject({
          /** redis:// or rediss:// URL, with credentials if any. Env STRANDLINE_REDIS_URL overrides. */
          url: z
            .string()
            .regex(/^rediss?:\/\/\S+$/, 'must be a redis:// or rediss:// URL')
            .default('redis://127.0.0.1:6379'),
          /** Name of this deployment's state; all its keys share the hash tag {strandline:<partition>}. Default main. */
          partition: z
            .string()
            .regex(/^[A-Za-z0-9_-]{1,64}$/, 'must be 1 to 64 letters, digits, - or _')
            .default('main'),
          /** The URL names one seed node of a Redis Cluster (a partition lives in one hash slot). Default false. */
          cluster: z.boolean().default(false),
        })
        .prefault({}),
    })
    .prefault({}),
  ingest: z
    .strictObject({
      /** Largest feed file or response read, in bytes. Default 20 MiB. */
      maxFeedBytes: z
        .number()
        .int()
        .min(1024)
        .default(20 * 1024 * 1024),
      /** Longest article body kept, in characters; longer ones are rejected. Default 200,000 (a long feature is ~60,000). */
      maxArticleChars: z.number().int().min(100).default(200_000),
      /** Largest body POST /api/articles takes, bytes. Default 10 MiB. */
      maxPushBytes: z
        .number()
        .int()
        .min(1024)
        .max(512 * 1024 * 1024)
        .default(10 * 1024 * 1024),
      /** Most articles in one push. Default 1,000. */
      maxPushItems: z.number().int().min(1).max(100_000).default(1000),
      /** Time allowed for one feed fetch, ms. Default 15 s. */
      fetchTimeoutMs: z.number().int().min(100).default(15_000),
      /**
       * Fetch feed and article URLs on loopback, private, link-local and other special-purpose
       * addresses. Default false: refused (server-side request forgery).
       */
      allowPrivateNetworks: z.boolean().default(false),
      /** Networks fetched even so, as CIDR (`10.20.0.0/16`) or addresses, e.g. an intranet feed host. Default none. */
      allowedNetworks: networkList,
      /** Redirects followed for one feed URL. Default 5. */
      maxRedirects: z.number().int().min(0).max(20).default(5),
      /**
       * Oldest publication date taken, in days before the article is read. Default 36,500 (a
       * century: any news archive). An older date (year 0001) leaves a feed item undated, with
       * a warning, and refuses a pushed one.
       */
      publishedPastDays: z.number().int().min(1).max(3_650_000).default(36_500),
      /**
       * Latest publication date taken, in hours after the article is read. Default 48 (clocks
       * and time zones err). A later date (year 9999) becomes the time the feed item was read,
       * with a warning, and refuses a pushed one.
       */
      publishedAheadHours: z.number().int().min(0).max(8760).default(48),
    })
    .prefault({}),
  copies: z
    .strictObject({
      /** Recognise lightly edited copies (MinHash), not only verbatim ones. Default true. */
      near: z.boolean().default(true),
      /**
       * Estimated Jaccard similarity of 4-word shingles at or above which an article is a copy
       * of an earlier one. Default 0.5: on our built set of copied, edited and unrelated pairs,
       * precision 1.0 and recall 0.98; articles on the same story by other outlets scored at
       * most 0.05.
       */
      nearThreshold: z.number().min(0.1).max(1).default(0.5),
      /** Articles further apart in time are never copies of one another, days. Default 7. */
      windowDays: z.number().min(0.1).max(365).default(7),
      /** Articles with fewer words are not compared (too short to tell a copy from a coincidence). Default 40. */
      minWords: z.number().int().min(1).default(40),
    })
    .prefault({}),
  poll: z
    .strictObject({
      /** Poll the feeds in this process. With several api processes on one Redis partition, leave it on in one. Default true. */
      enabled: z.boolean().default(true),
      /** Feeds to poll, kept in line with this list at each start; more can be added through the API. */
      feeds: z
        .array(
          z.strictObject({
            url: z.url({ protocol: /^https?$/ }),
            /** Outlet name to use instead of the feed's title. */
            outlet: z.string().min(1).max(200).optional(),
            intervalSeconds: z.number().int().min(30).max(86_400).optional(),
          }),
        )
        .max(10_000)
        .default([]),
      /** Seconds between polls of one feed unless it says otherwise. Default 600 (10 minutes). */
      intervalSeconds: z.number().int().min(30).max(86_400).default(600),
      /** Longest wait after failures in a row, seconds. Default 21,600 (6 hours). */
      maxBackoffSeconds: z
        .number()
        .int()
        .min(60)
        .max(7 * 86_400)
        .default(21_600),
      /** Feeds fetched at the same time. Default 8. */
      concurrency: z.number().int().min(1).max(64).default(8),
      /** Most feeds polled. Default 2,000. */
      maxFeeds: z.number().int().min(1).max(100_000).default(2000),
      /**
       * Fetch the linked page of a new item whose feed text is shorter than fullTextBelowChars
       * and take its article body (Readability). Off by default: one more request per item.
       */
      fullText: z.boolean().default(false),
      /** Feed texts shorter than this are treated as summaries. Default 1,200 characters. */
      fullTextBelowChars: z.number().int().min(1).default(1200),
    })
    .prefault({}),
  process: z
    .strictObject({
      /**
       * What this process does. all: everything in one process (the default; any store).
       * With the Redis store the work can be split: api (queries, the page, queueing feeds),
       * worker (analysis and event sentences; run several), linker (linking, notifications,
       * retention; one per partition). Env STRANDLINE_ROLE overrides.
       */
      role: z.enum(['all', 'api', 'worker', 'linker']).default('all'),
    })
    .prefault({}),
  queue: z
    .strictObject({
      /** Intake entries a worker takes at a time. Default 16. */
      batch: z.number().int().min(1).max(1000).default(16),
      /** How long a blocking read waits before looking again, ms. Default 2 s. */
      blockMs: z.number().int().min(10).max(60_000).default(2000),
      /** An entry pending this long is taken over from its worker (which died or hangs), ms. Default 30 s. */
      claimIdleMs: z.number().int().min(100).default(30_000),
      /** Deliveries after which a failing entry goes to the dead-letter stream. Default 5. */
      maxDeliveries: z.number().int().min(1).max(100).default(5),
    })
    .prefault({}),
  analysis: z
    .strictObject({
      /**
       * Threads that split and analyse articles beside the thread that links and stores them;
       * 0 analyses on the main thread. Default auto: one fewer than the cores, at most 4.
       */
      threads: z.union([z.literal('auto'), z.number().int().min(0).max(32)]).default('auto'),
    })
    .prefault({}),
  detect: z
    .strictObject({
      /** Event-ness score at or above which a sentence becomes a mention. Default 0.5. */
      threshold: z.number().min(0).max(1).default(0.5),
    })
    .prefault({}),
  embed: z
    .strictObject({
      /** tfidf (offline default, nothing to install) or transformer (a local sentence-embedding model in modelPath). Default tfidf. */
      kind: z.enum(['tfidf', 'transformer']).default('tfidf'),
      /** Folder of the transformer model (config.json, tokenizer.json, tokenizer_config.json, onnx/model.onnx). Default models/sentence-embedder. */
      modelPath: z.string().min(1).default('models/sentence-embedder'),
      /** Sentences per transformer batch. Default 32. */
      batchSize: z.number().int().min(1).max(1024).default(32),
      /** Threads the transformer model may use; 0 lets the ONNX runtime choose (all cores). Set 1 when running one worker process per core. */
      threads: z.number().int().min(0).max(64).default(0),
      /** log2 of the hashed feature space. Default 20 (about a million buckets, few collisions for news vocabulary). */
      hashBits: z.number().int().min(10).max(26).default(20),
      /**
       * TF-IDF over adjacent word pairs too, not only single lemmas. Default false: on
       * meantime-en and wec-eng-val together, unigrams did better (docs/decisions/linking-defaults.md).
       */
      bigrams: z.boolean().default(false),
      /**
       * The power idf is raised to: above 1, rare, specific words (names, numbers) count more
       * against words every article of a topic shares. Default 2 (docs/decisions/linking-defaults.md).
       */
      idfPower: z.number().min(0.5).max(4).default(2),
    })
    .prefault({}),
  link: z
    .strictObject({
      /**
       * Score at or above which a mention joins an event; below, it opens one. With
       * calibration on (the default) this is the threshold for a stream where half the best
       * candidates score high, moved up or down as the stream shows itself (link/calibration.ts).
       * Default 0.17 (decided on meantime-en and wec-eng-val, docs/decisions/linking-defaults.md).
       */
      threshold: z.number().min(0).max(1).default(0.17),
      /**
       * The threshold calibrated on the stream: threshold + slope x ln((1 - r) / r), r the share
       * of mentions whose best candidate scores at least anchor (with priorMentions
       * pseudo-mentions at priorShare). mode 'fixed' keeps the threshold as configured.
       * Defaults decided on meantime-en and wec-eng-val (docs/decisions/linking-defaults.md).
       */
      calibration: z
        .strictObject({
          mode: z.enum(['stream', 'fixed']).default('stream'),
          anchor: z.number().min(0).max(1).default(0.3),
          slope: z.number().min(0).max(1).default(0.11),
          priorMentions: z.number().min(1).max(1_000_000).default(20),
          priorShare: z.number().gt(0).lt(1).default(0.35),
        })
        .prefault({}),
      /** Half-life of the time decay, days. Default 7 (docs/decisions/link-settings.md). */
      halfLifeDays: z.number().min(0.1).default(7),
      /** Events scored per mention at most. Default 24 (docs/decisions/link-settings.md). */
      maxCandidates: z.number().int().min(1).default(24),
      /**
       * Events remembered per index key (most recent kept). Default 64: it bounds the cost of
       * a lookup once common keys fill up (docs/decisions/link-settings.md).
       */
      postingLimit: z.number().int().min(8).default(64),
      /** Index keys looked up per mention (its rarest terms). Default 16. */
      lookupTerms: z.number().int().min(1).default(16),
      /** Posting entries read per lookup at most, rarest keys first; keeps the cost per mention flat as history grows. Default 192 (docs/decisions/link-settings.md). */
      lookupBudget: z.number().int().min(16).default(192),
      /** Relative boost of the score for shared rare participants and places, at most (0.1 = +10 %). Default 0.1. */
      overlapWeight: z.number().min(0).max(1).default(0.1),
      /**
       * A further link for the same sentence needs at least threshold + this (up to three
       * links), since sentences often report several events. Default 0.03: a further event
       * barely over the bar is more often a near-duplicate than a second happening
       * (docs/decisions/linking-defaults.md).
       */
      secondaryMargin: z.number().min(0).max(1).default(0.03),
      /** Terms kept per event centroid. Default 300. */
      centroidTerms: z.number().int().min(16).default(300),
      /** Consolidation runs after every this many stored articles, over the events they touched; 0 turns it off. Default 25. */
      consolidateEvery: z.number().int().min(0).default(25),
      /**
       * Two events merge when their centroids' cosine times the time decay between them
       * reaches this. Default 0.4, about twice the link threshold: centroids of one event agree more
       * than a sentence agrees with a centroid (docs/decisions/link-settings.md).
       */
      mergeThreshold: z.number().min(0).max(1).default(0.4),
      /** Dense (transformer) centroids are searched exactly up to this many events and with an HNSW index beyond. Default 20,000. */
      annAbove: z.number().int().min(0).default(20_000),
      /**
       * Consolidation splits an event whose mentions fall into two parts less alike than this
       * (the parts' centroid cosine x time decay). Default 0.1, about half the link threshold: the
       * parts must look less alike than a sentence has to look like an event to join it. At
       * most mergeThreshold, or a split event would merge back at the next pass.
       */
      splitThreshold: z.number().min(0).max(1).default(0.1),
      /** Events with fewer mentions are not examined for a split; 0 turns splitting off. Default 6. */
      splitMinMentions: z.number().int().min(0).default(6),
      /**
       * A sentence is compared with every candidate event, but one of another story than its
       * article's, sharing no participant or place with the sentence, needs threshold + this
       * to be linked: cross-story links are the valuable rare case, a shared name is the
       * stronger evidence that lets one through, and the story level stays soft (a wrong story
       * never hides the right event). Default 0.15 (decided on meantime-en and wec-eng-val,
       * docs/decisions/linking-defaults.md).
       */
      crossStoryMargin: z.number().min(0).max(1).default(0.15),
      /**
       * An event's score is multiplied by 1 + sizePrior x ln(its mentions), at most x3: an event
       * many sentences already report is the likelier home for one more (the prior of a Chinese
       * restaurant process). Default 0.22 (docs/decisions/linking-defaults.md); 0 turns it off.
       */
      sizePrior: z.number().min(0).max(2).default(0.22),
      /**
       * Events the sentence's own article opened score this much of their similarity: an
       * article's sentences share its words whatever they report, and mostly report different
       * events. Default 1, off: with the calibrated threshold it no longer earned its place
       * on meantime-en and wec-eng-val (docs/decisions/linking-defaults.md).
       */
      sameArticleFactor: z.number().min(0).max(1).default(1),
      /**
       * A sentence that points back at a happening ("the move", "this deal") also links to the
       * best-scoring of the events its article's earlier sentences reported, as a further link
       * that leaves that event as it was. Default true: on meantime-en it raised extended
       * BCubed from 63.4 to 64.9 with CoNLL unchanged, and left wec-eng-val as it was
       * (docs/decisions/linking-defaults.md).
       */
      backReferences: z.boolean().default(true),
      /** Score (whole-article cosine x story time decay) at or above which an article joins a story. Default 0.2. */
      storyThreshold: z.number().min(0).max(1).default(0.2),
      /** Half-life of the time decay between an article and a story, days. Default 7. */
      storyHalfLifeDays: z.number().min(0.1).default(7),
      /** Two stories merge when their centroids score this alike (cosine x decay). Default 0.5. */
      storyMergeThreshold: z.number().min(0).max(1).default(0.5),
      /**
       * A story divides in two when its articles' two parts score below this (centroid
       * cosine x story time decay). Default 0.1 (docs/decisions/stories.md); 0 turns it off.
       */
      storySplitThreshold: z.number().min(0).max(1).default(0.1),
      /** Stories with fewer articles are not examined for a split. Default 8. */
      storySplitMinArticles: z.number().int().min(0).default(8),
    })
    .prefault({})
    .refine((l) => l.splitThreshold <= l.mergeThreshold, {
      message: 'splitThreshold must not exceed mergeThreshold (a split event would merge back)',
      path: ['splitThreshold'],
    })
    .refine((l) => l.storySplitThreshold <= l.storyMergeThreshold, {
      message: 'storySplitThreshold must not exceed storyMergeThreshold (a split story would merge back)',
      path: ['storySplitThreshold'],
    }),
  webhooks: z
    .strictObject({
      subscribers: z
        .array(subscriberSchema)
        .default([])
        .refine((subs) => new Set(subs.map((x) => x.name)).size === subs.length, 'subscriber names must differ'),
      /** Delivery attempts before a message goes to the dead-letter list. Default 8 (about 6 hours of retries). */
      maxAttempts: z.number().int().min(1).max(50).default(8),
      /** Time allowed for one delivery, ms. Default 10 s. */
      timeoutMs: z.number().int().min(100).default(10_000),
      /**
       * How often due deliveries are looked for, ms. Default 100: a notification leaves
       * within about a tenth of a second of its commit, for one indexed read per poll.
       */
      pollMs: z.number().int().min(10).default(100),
      /** Deliveries in flight at once, one per subscriber at most (a slow receiver delays only itself). Default 8. */
      concurrency: z.number().int().min(1).max(256).default(8),
      /**
       * Deliver to loopback, private, link-local and other special-purpose addresses. Default
       * false: refused at start-up when a subscriber's URL names one, and at every delivery
       * for the addresses its name resolves to (server-side request forgery).
       */
      allowPrivateNetworks: z.boolean().default(false),
      /** Networks delivered to even so, as CIDR or addresses. Default none. */
      allowedNetworks: networkList,
    })
    .prefault({})
    .superRefine((w, ctx) => {
      // Literal addresses are judged now; names are judged at every delivery (DNS answers change).
      const guard = new NetworkGuard(w, WEBHOOK_NAMES);
      w.subscribers.forEach((s, i) => {
        try {
          guard.checkUrl(new URL(s.url));
        } catch (err) {
          ctx.addIssue({ code: 'custom', message: (err as Error).message, path: ['subscribers', i, 'url'] });
        }
      });
    }),
  retention: z
    .strictObject({
      /** Days after which stored article and sentence text is erased (links and events stay). Default null: keep. */
      textDays: z.number().int().min(1).nullable().default(null),
      /**
       * Days a webhook notification is kept after its last delivery settled (delivered or
       * dead-lettered); then it and its delivery records are deleted. Pending deliveries are
       * never pruned; a notification no subscriber asked for (kept for the live stream,
       * /api/stream) goes this many days after it was written. Default 30; null: keep for
       * ever (the outbox then grows with the stream).
       */
      notificationDays: z.number().int().min(1).nullable().default(30),
    })
    .prefault({}),
  log: z
    .strictObject({
      /** pino level. Default info. Env STRANDLINE_LOG_LEVEL overrides. */
      level: z.enum(['fatal', 'error', 'warn', 'info', 'debug', 'trace', 'silent']).default('info'),
    })
    .prefault({}),
});

/** Validated, frozen configuration. */
export type Config = z.infer<typeof configSchema>;
/** One webhook subscriber. */
export type Subscriber = z.infer<typeof subscriberSchema>;

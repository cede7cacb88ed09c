/**
 * What a running process reports about its own work, shared by the parts that produce it
 * (the pipeline, the scale-out queue) and the API that shows it, so neither leans on the
 * other's modules.
 */

/** Progress of the replay or ingest the process is running. */
export interface IngestStatus {
  state: 'idle' | 'replaying' | 'finished';
  processed: number;
  total: number;
  stored: number;
  rejected: number;
}

/** A queued article a worker could not take, kept for the operator. */
export interface QueueDeadLetter {
  id: string;
  entry: string;
  error: string;
  /** The queued article as received (possibly malformed), cut to 2,000 characters. */
  article: string;
}

/** The scale-out work queue as an operator sees it. */
export interface QueueView {
  depth(): Promise<{ intake: number; analysed: number; deadLetters: number }>;
  deadLetters(limit: number): Promise<QueueDeadLetter[]>;
}

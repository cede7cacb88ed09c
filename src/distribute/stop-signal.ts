/**
 * Lets a loop leave a blocking read when it is told to stop. Stopping disconnects the
 * blocking client, and ioredis may then leave the read's promise pending for good (a
 * blocking command caught by a disconnect, notably on a Cluster: redis/ioredis#610, #1285),
 * so a loop that only awaited the read would never end and its stop would hang. An entry a
 * worker read that way stays pending in its group and is claimed by another worker.
 */
export const STOPPED = Symbol('stopped');

export class StopSignal {
  private fire!: () => void;
  private readonly stopped = new Promise<typeof STOPPED>((resolve) => (this.fire = () => resolve(STOPPED)));

  /** Settles every pending and later `race`. */
  stop(): void {
    this.fire();
  }

  /** The read's answer, or STOPPED once stop() has been called, whichever comes first. */
  race<T>(read: Promise<T>): Promise<T | typeof STOPPED> {
    // An abandoned read that fails later must not be an unhandled rejection.
    read.catch(() => undefined);
    return Promise.race([read, this.stopped]);
  }
}

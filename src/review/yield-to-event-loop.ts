/**
 * Lets queued requests (such as a review run's progress polls) be answered before a stage that
 * holds the thread for a while: a request takes several turns of the event loop (its socket, the
 * token's lookup, the answer), so one turn is not enough.
 */
export function yieldToEventLoop(): Promise<void> {
  return new Promise((resolve) => setTimeout(resolve, requestTurnMilliseconds));
}

const requestTurnMilliseconds = 10;

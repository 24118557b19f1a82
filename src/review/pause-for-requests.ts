/**
 * Lets queued requests (such as a review run's progress polls) be answered before a stage that
 * holds the thread for a while: a request takes several turns of the event loop (its socket, the
 * token's lookup, the answer), so the one turn of shared-chunks.ts's yieldToEventLoop (enough
 * between the many short steps of a threaded job) is not enough before one long stage.
 */
export function pauseForRequests(): Promise<void> {
  return new Promise((resolve) => setTimeout(resolve, requestTurnMilliseconds));
}

const requestTurnMilliseconds = 10;

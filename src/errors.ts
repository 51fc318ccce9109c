/**
 * Errors a user can fix (bad input, bad options). The CLI prints the message as one line and exits 2.
 * Anything else is a runtime failure (exit 1).
 */
export class InputError extends Error {
  constructor(message: string) {
    super(message);
    this.name = 'InputError';
  }
}

/**
 * A result that failed one of sill's own checks (the Euler relation, the water balance): the run
 * ends with exit 1 and one line naming the check and its figures — never with the result.
 */
export class SelfCheckError extends Error {
  constructor(check: string, figures: string, hint = 'this is a bug in sill, please report it with the input') {
    super(`self-check failed: ${check} (${figures}); the result is not trustworthy — ${hint}`);
    this.name = 'SelfCheckError';
  }
}

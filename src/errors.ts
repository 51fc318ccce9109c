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

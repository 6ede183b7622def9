/**
 * Two kinds of failure leave rungwise: a {@link UserError} (bad input the user can fix:
 * exit code 2, one line) and anything else (an internal error: exit code 1, short message,
 * the stack only with `--debug`).
 */
export class UserError extends Error {
  /** Stable machine-readable code, e.g. `E_STUDY_INVALID`. */
  readonly code: string;
  readonly exitCode = 2;

  constructor(code: string, message: string) {
    super(message);
    this.name = 'UserError';
    this.code = code;
  }
}

export function isUserError(error: unknown): error is UserError {
  return error instanceof UserError;
}

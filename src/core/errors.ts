/**
 * Two kinds of failure leave rungwise: a {@link UserError} (bad input the user can fix:
 * exit code 2, one line) and anything else (an internal error: exit code 1, short message,
 * the stack only with `--debug`).
 */
export class UserError extends Error {
  /** Stable machine-readable code, e.g. `E_STUDY_INVALID`. */
  readonly code: string;
  /** 2 for bad input; 1 for a study stopped by its surroundings (a full disk), which `resume` continues. */
  readonly exitCode: 1 | 2;

  constructor(code: string, message: string, options: { exitCode?: 1 | 2; cause?: unknown } = {}) {
    super(message, options.cause === undefined ? undefined : { cause: options.cause });
    this.name = 'UserError';
    this.code = code;
    this.exitCode = options.exitCode ?? 2;
  }
}

/** File-system errors that stop a study rather than fail a trial: the disk, the permissions, the folder. */
const STOPPING_CODES: Readonly<Record<string, string>> = {
  ENOSPC: 'no space left on the device',
  EDQUOT: 'disk quota exceeded',
  EROFS: 'the file system is read-only',
  EACCES: 'permission denied',
  EPERM: 'operation not permitted',
  ENOTDIR: 'a part of the path is not a folder',
  ENOENT: 'the folder no longer exists',
  EIO: 'an input/output error from the device',
};

/**
 * The one-line error for a write that failed because of the study's surroundings, naming the path and
 * the cause and how to go on; undefined for any other error.
 */
export function studyStoppedError(error: unknown, runDir: string): UserError | undefined {
  const cause = error as NodeJS.ErrnoException | undefined;
  const why = cause?.code ? STOPPING_CODES[cause.code] : undefined;
  if (!why) return undefined;
  const where = cause?.path ?? runDir;
  return new UserError(
    'E_STUDY_STOPPED',
    `${where}: ${why} (${cause?.code}); the study stopped and every trial saved so far is kept; fix that, then continue it with: rungwise resume ${runDir}`,
    { exitCode: 1, cause: error },
  );
}

export function isUserError(error: unknown): error is UserError {
  return error instanceof UserError;
}

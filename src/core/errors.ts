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

/** A file-system error's path, code and cause in words; undefined for any other error. */
export function fileSystemCause(error: unknown): { path: string | undefined; code: string; why: string } | undefined {
  const cause = error as NodeJS.ErrnoException | undefined;
  const why = cause?.code ? STOPPING_CODES[cause.code] : undefined;
  return why ? { path: cause?.path, code: cause!.code!, why } : undefined;
}

/**
 * The one-line error for a write that failed because of the study's surroundings, naming the path and
 * the cause and how to go on; undefined for any other error. Once the study file is saved (`saved`),
 * the study stopped and `resume` continues it (exit code 1); before that, nothing was kept and the
 * study is to be run again once the cause is fixed (exit code 2).
 */
export function studyStoppedError(error: unknown, runDir: string, saved = true): UserError | undefined {
  const cause = fileSystemCause(error);
  if (!cause) return undefined;
  const where = cause.path ?? runDir;
  if (!saved) {
    return new UserError('E_RUN_DIR_UNWRITABLE', `${where}: ${cause.why} (${cause.code}); nothing was saved; fix that or choose another --out, then run the study again`, { cause: error });
  }
  return new UserError(
    'E_STUDY_STOPPED',
    `${where}: ${cause.why} (${cause.code}); the study stopped and every trial saved so far is kept; fix that, then continue it with: rungwise resume ${runDir}`,
    { exitCode: 1, cause: error },
  );
}

/** The one-line error for an output folder (a report, an export) that cannot be written; undefined for any other error. */
export function outputFolderError(error: unknown, folder: string): UserError | undefined {
  const cause = fileSystemCause(error);
  if (!cause) return undefined;
  return new UserError('E_OUT_UNWRITABLE', `${folder}: ${cause.why} (${cause.code}); nothing was written; choose another --out`, { cause: error });
}

export function isUserError(error: unknown): error is UserError {
  return error instanceof UserError;
}

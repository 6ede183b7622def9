import { readFile, rm, writeFile } from 'node:fs/promises';
import { hostname } from 'node:os';
import path from 'node:path';
import lockfile from 'proper-lockfile';
import { UserError } from '../core/errors.js';

const LOCK_NAME = 'study.lock';
const OWNER_NAME = 'study.owner.json';
/** Files of a run directory that belong to its lock. */
export const LOCK_FILES: readonly string[] = [LOCK_NAME, OWNER_NAME];

interface LockOwner {
  pid: number;
  host: string;
  since: string;
}

export interface StudyLock {
  release(): Promise<void>;
  /** Set when a lock left by a dead process was taken over. */
  tookOverFrom?: LockOwner;
}

function isAlive(pid: number): boolean {
  try {
    process.kill(pid, 0);
    return true;
  } catch (error) {
    return (error as NodeJS.ErrnoException).code === 'EPERM';
  }
}

async function readOwner(dir: string): Promise<LockOwner | undefined> {
  try {
    return JSON.parse(await readFile(path.join(dir, OWNER_NAME), 'utf8')) as LockOwner;
  } catch {
    return undefined;
  }
}

async function acquire(dir: string): Promise<() => Promise<void>> {
  return lockfile.lock(dir, {
    lockfilePath: path.join(dir, LOCK_NAME),
    realpath: false,
    // The holder refreshes the lock every 5 s; one untouched for 30 s is stale even on another host.
    update: 5_000,
    stale: 30_000,
    retries: 0,
    onCompromised: (error) => process.stderr.write(`warning: the lock on ${dir} was lost (${error.message})\n`),
  });
}

/**
 * One run per study: lock the run directory for this process. A second `run` or `resume` on the
 * same directory gets a {@link UserError} naming the process that holds it; a lock left by a
 * process that is no longer running (on this host) is taken over.
 */
export async function lockStudy(dir: string): Promise<StudyLock> {
  let tookOverFrom: LockOwner | undefined;
  let release: () => Promise<void>;
  try {
    release = await acquire(dir);
  } catch (error) {
    if ((error as NodeJS.ErrnoException).code !== 'ELOCKED') throw error;
    const owner = await readOwner(dir);
    if (owner && owner.host === hostname() && !isAlive(owner.pid)) {
      await rm(path.join(dir, LOCK_NAME), { recursive: true, force: true });
      release = await acquire(dir);
      tookOverFrom = owner;
    } else if (!owner) {
      throw new UserError(
        'E_STUDY_LOCKED',
        `${dir}: the study is locked (${LOCK_NAME}) but no process is named as its owner (${OWNER_NAME} is missing): another rungwise may be starting on it, or one stopped while taking the lock; if none is running, delete ${path.join(dir, LOCK_NAME)} and try again`,
      );
    } else {
      const who = `process ${owner.pid} on ${owner.host}, since ${owner.since}`;
      throw new UserError('E_STUDY_LOCKED', `${dir}: the study is in use by ${who}; wait for it to finish or stop it first`);
    }
  }
  const owner: LockOwner = { pid: process.pid, host: hostname(), since: new Date().toISOString() };
  await writeFile(path.join(dir, OWNER_NAME), `${JSON.stringify(owner)}\n`);
  return {
    ...(tookOverFrom ? { tookOverFrom } : {}),
    release: async () => {
      await rm(path.join(dir, OWNER_NAME), { force: true });
      await release();
    },
  };
}

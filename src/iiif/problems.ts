import { InputError } from '../errors.ts';

/**
 * Collects what is wrong with single items of a document (one canvas, one
 * annotation, one collection member) so the rest of the document can be used.
 * Readers call `attempt` around each item; whoever called the reader decides
 * whether a problem is fatal (documents the user wrote, `--strict`) or a
 * failure record (documents from someone else's server).
 */
export class ProblemLog {
  readonly problems: InputError[] = [];

  /** Runs `read`; an InputError it throws is recorded and undefined returned. Other errors propagate. */
  attempt<T>(read: () => T): T | undefined {
    try {
      return read();
    } catch (err) {
      if (err instanceof InputError) {
        this.problems.push(err);
        return undefined;
      }
      throw err;
    }
  }

  /** Throws the first problem, if any (the strict reading). */
  throwFirst(): void {
    if (this.problems.length > 0) throw this.problems[0];
  }
}

/** What a lenient reader returns: the usable part and what was left out. */
export interface Read<T> {
  value: T;
  problems: InputError[];
}

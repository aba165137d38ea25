import type { Readable, Writable } from 'node:stream';

/** The streams and environment a command runs with; tests pass their own. */
export interface CliIo {
  stdout: Writable;
  stderr: Writable;
  stdin?: Readable;
  /** Whether stderr is a terminal (progress bars only then). */
  isTty: boolean;
  cwd: string;
  env: Readonly<Record<string, string | undefined>>;
}

/** A command: takes its own arguments (after the command words), returns the exit code. */
export type Command = (argv: string[], io: CliIo) => Promise<number>;

/** A usage mistake on the command line: exit code 2 with the message. */
export class UsageError extends Error {
  override readonly name = 'UsageError';
  readonly code = 'usage';
}

/** Writes a line to a stream. */
export function println(stream: Writable, text = ''): void {
  stream.write(text + '\n');
}

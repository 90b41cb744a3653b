/**
 * The shape every subcommand has: a name, a one-line summary for the top-level help, its
 * own help text, and a run function that returns the exit code. Only main.ts exits.
 */
export interface Command {
  readonly name: string;
  readonly summary: string;
  readonly help: string;
  /** Runs the command; resolves to the exit code (0 success, 1 runtime failure). Throws UsageError for bad usage. */
  run(argv: readonly string[], io: CommandIO): Promise<number>;
}

/** Where a command writes; tests pass their own. */
export interface CommandIO {
  readonly stdout: NodeJS.WritableStream & { isTTY?: boolean; columns?: number; rows?: number };
  readonly stderr: NodeJS.WritableStream & { isTTY?: boolean };
  readonly stdin: NodeJS.ReadableStream & { isTTY?: boolean };
  readonly env: NodeJS.ProcessEnv;
}

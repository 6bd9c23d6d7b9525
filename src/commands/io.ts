/** Where a command writes; tests pass collectors, the CLI passes process streams. */
export interface CommandIo {
  stdout: (text: string) => void;
  stderr: (text: string) => void;
  env: Readonly<Record<string, string | undefined>>;
  cwd: string;
}

/** A CLI command: parses its own argv (after the command name) and returns the exit code. */
export type CommandMain = (argv: string[], io: CommandIo) => Promise<number>;

/** A user error in the command line: printed without a stack trace, exit code 2. */
export class UsageError extends Error {
  override readonly name = 'UsageError';
}

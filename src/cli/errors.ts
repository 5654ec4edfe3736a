// An error meant for the user: printed as one line, exit code 2 (bad arguments) or 1 (anything else).

export class CliError extends Error {
  constructor(
    message: string,
    readonly exitCode = 1,
  ) {
    super(message);
    this.name = 'CliError';
  }
}

/**
 * The root of raretide's errors. Callers decide retry, dead-letter or stop from `code` and
 * `retriable`, never from message text. Lives in `config/` because it is the bottom layer that every
 * other layer may import.
 */
export class RaretideError extends Error {
  /** A stable machine-readable code, e.g. `config.invalid`, `model.corrupt`, `kafka.transport`. */
  readonly code: string;
  /** True when the same operation may succeed if tried again (a broker hiccup); false otherwise. */
  readonly retriable: boolean;

  constructor(code: string, message: string, options: { retriable?: boolean; cause?: unknown } = {}) {
    super(message, options.cause === undefined ? undefined : { cause: options.cause });
    this.name = 'RaretideError';
    this.code = code;
    this.retriable = options.retriable ?? false;
  }
}

/** A problem the user fixes by editing configuration or command-line flags (CLI exit code 2). */
export class UsageError extends RaretideError {
  constructor(message: string, options: { cause?: unknown; code?: string } = {}) {
    super(options.code ?? 'usage', message, { retriable: false, cause: options.cause });
    this.name = 'UsageError';
  }
}

/**
 * One problem found in a config: where it is, what kind it is, and the one-line text shown to the
 * user (it names the path, the bad value and the fix). Kept as data so callers can list or count them.
 */
export interface ConfigProblem {
  /** Dotted path of the offending entry, e.g. `balance.targets.fraud`; empty for the whole file. */
  readonly path: string;
  /** The kind of problem, e.g. `unknown_key`, `invalid_type`, `missing`, `yaml_syntax`. */
  readonly code: string;
  /** One line, starting with `config error:`. */
  readonly message: string;
}

/** A config file (or its environment overrides) that cannot be used; its message is one line per problem. */
export class ConfigError extends UsageError {
  readonly problems: readonly ConfigProblem[];

  constructor(problems: readonly ConfigProblem[], options: { cause?: unknown } = {}) {
    super(problems.map((problem) => problem.message).join('\n'), { code: 'config.invalid', cause: options.cause });
    this.name = 'ConfigError';
    this.problems = problems;
  }
}

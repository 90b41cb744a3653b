/**
 * The root of shardwise's own errors: every error class of the project extends it, so a
 * caller can tell ours from the runtime's and the libraries'. `retriable` says whether
 * doing the same thing again later may succeed (a broker coming back: yes; a bad option
 * value: never); `cause` keeps the underlying error whole for `--debug`. The name is left
 * to each subclass.
 */
export class ShardwiseError extends Error {
  /** True when the same operation may succeed if tried again later. */
  readonly retriable: boolean;

  /**
   * @param message one line saying what failed, naming the option or value at fault
   * @param options `retriable` (default false) and the underlying `cause`
   */
  constructor(message: string, options: { retriable?: boolean; cause?: unknown } = {}) {
    super(message, options.cause === undefined ? undefined : { cause: options.cause });
    this.retriable = options.retriable ?? false;
  }
}

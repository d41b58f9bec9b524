/**
 * What a scenario must undo (workers, brokers, topics, directories), undone in reverse order when it
 * ends, whether it passed, failed or threw. Every undo step runs even when an earlier one fails.
 */
export class CleanupStack {
  private readonly steps: { readonly what: string; readonly undo: () => Promise<void> | void }[] = [];

  /** Registers `undo` to run at `close`, after the steps registered later. */
  defer(what: string, undo: () => Promise<void> | void): void {
    this.steps.push({ what, undo });
  }

  /** Runs every step, last registered first; returns the failures as lines (empty when all went well). */
  async close(): Promise<string[]> {
    const problems: string[] = [];
    for (const { what, undo } of this.steps.splice(0).reverse()) {
      try {
        await undo();
      } catch (error) {
        problems.push(`clean-up "${what}" failed: ${error instanceof Error ? error.message : String(error)}`);
      }
    }
    return problems;
  }
}

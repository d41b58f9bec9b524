/**
 * Node options the worker is deployed with. deploy/container/Containerfile's ENTRYPOINT and
 * deploy/systemd/raretide.service's ExecStart carry them (test/unit/deploy checks both), and the tests'
 * spawned workers and `npm run bench:worker` start `raretide run` with them, so what is measured is what
 * is deployed. Run the CLI yourself with them too: `NODE_OPTIONS=--max-semi-space-size=64 raretide run …`.
 *
 * --max-semi-space-size=64 (MiB): V8's young generation sized for a batch's garbage. At the default
 * (16 MiB semi-spaces) the ~1,000 consumed messages of a batch, their decoded records and the outputs
 * outlive a scavenge or two and are copied into the old generation before they die. Measured with
 * `npm run bench:worker` rounds alternating the flag within one run (2 cores, broker on the same
 * machine, three runs): worker ÷ pipe 0.79–1.09 with it (12 rounds, median 0.99, 11 of 12 ≥ 0.85)
 * against 0.60–1.02 without (8 rounds, median 0.84, 4 of 8 ≥ 0.85), and 0.75–0.95 at 32 MiB (4 rounds); worker RSS about 60 MiB above 32 MiB.
 * Setting it from inside the process (v8.setFlagsFromString) does not resize a heap already made.
 */
export const WORKER_NODE_OPTIONS: readonly string[] = ['--max-semi-space-size=64'];

/**
 * The worker's Node options this process was started without, looking at its command line and
 * `NODE_OPTIONS` (an option counts by name, whatever value it was given: the operator's choice stands).
 */
export function missingNodeOptions(execArgv: readonly string[], nodeOptions: string | undefined): string[] {
  const given = [...execArgv, ...(nodeOptions ?? '').split(/\s+/)].map((argument) => argument.split('=')[0]!.replaceAll('_', '-'));
  return WORKER_NODE_OPTIONS.filter((option) => !given.includes(option.split('=')[0]!));
}

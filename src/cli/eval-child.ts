/**
 * One local worker process of `treewright evaluate --workers N` (see src/eval/pool.ts): sets up
 * from the parent's flags exactly as `evaluate` does in one process, then makes rows.
 */
import { serveJobs } from '../eval/pool.ts';
import type { Decoding } from '../queue/fingerprint.ts';
import { openEvalSetup, type SetupFlags } from './commands/eval-setup.ts';

/** What the parent sends first. */
export interface ChildInit {
  readonly flags: SetupFlags;
  readonly decoding: Decoding;
  /** onnxruntime threads for this process (undefined: onnxruntime's own choice, as in one process) */
  readonly threads?: number;
  /** a question to warm up on (masks compiled or loaded, both modes run once) */
  readonly warmQuestion: string;
}

serveJobs(async (raw) => {
  const init = raw as ChildInit;
  const setup = await openEvalSetup(init.flags, init.threads);
  await setup.warmUp(init.warmQuestion, init.decoding);
  return setup.maker(init.decoding);
});

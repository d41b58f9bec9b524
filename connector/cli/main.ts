#!/usr/bin/env node
import { registerCheck } from './commands/check.js';
import { registerDemo } from './commands/demo.js';
import { registerEvaluate } from './commands/evaluate.js';
import { registerFit } from './commands/fit.js';
import { registerInspect } from './commands/inspect.js';
import { registerRegenerate } from './commands/regenerate.js';
import { registerReplay } from './commands/replay.js';
import { registerRun } from './commands/run.js';
import { processContext, runCli } from './program.js';

// Each command lives in commands/<name>.ts; adding one is an import and an entry here.
const commands = [registerCheck, registerInspect, registerFit, registerReplay, registerRegenerate, registerRun, registerEvaluate, registerDemo];

process.exitCode = await runCli(process.argv, commands, processContext());

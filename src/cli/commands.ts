/** The registry of commands: one import and one entry per command file. */
import type { Command } from 'commander';
import type { Io } from './common.js';
import { registerDiagnose, registerRun } from './diagnose.js';
import { registerReport } from './report.js';
import { registerDemo } from './demo.js';
import { registerSimulate } from './simulate.js';
import { registerDesign } from './design.js';
import { registerFit } from './fit.js';

export type Register = (program: Command, io: Io, setExit: (code: number) => void) => void;

export const commands: Register[] = [
  registerDiagnose,
  registerRun,
  registerReport,
  registerDemo,
  registerSimulate,
  registerDesign,
  registerFit,
];

import type { Command } from 'commander';
import { registerBuild } from './build.js';
import { registerDiff } from './diff.js';
import { registerGitSetup } from './git-setup.js';
import { registerReview } from './review.js';
import { registerFix } from './fix.js';
import { registerNote } from './note.js';
import { registerInit } from './init.js';
import { registerLog } from './log.js';
import { registerVerify } from './verify.js';
import { registerWhy } from './why.js';
import { registerProfile } from './profile.js';
import { registerCheck } from './check.js';
import { registerCodebook } from './codebook.js';
import { registerQueries } from './queries.js';
import { registerReport } from './report.js';

/** Registers a command on the program; `setExit` records the exit code of a run that found something. */
export type RegisterCommand = (program: Command, setExit: (code: number) => void) => void;

export const commands: RegisterCommand[] = [registerInit, registerBuild, registerVerify, registerWhy, registerLog, registerDiff, registerGitSetup, registerReview, registerFix, registerNote, registerProfile, registerCheck, registerCodebook, registerQueries, registerReport];

#!/usr/bin/env node
import { Command } from 'commander';

const program = new Command();
program
  .name('rigsolve')
  .description('Calibrate the extrinsics of a multi-camera rig from a recorded target session.')
  .version('0.1.0');

program.parse(process.argv);

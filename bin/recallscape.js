#!/usr/bin/env node
// Thin launcher: the command line lives in the compiled coordinator.
import '../dist/coordinator/cli.js';

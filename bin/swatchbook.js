#!/usr/bin/env node
// Entry point: hands argv to the compiled command line (dist/, built by `npm run build`, which `npm ci` runs).
import { main } from '../dist/cli/main.js';

process.exitCode = await main(process.argv.slice(2));

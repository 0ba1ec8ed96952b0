#!/usr/bin/env node
// Thin launcher: the compiled CLI lives in dist/ (built by `npm run build`, run by `prepare` on `npm ci`).
import { main } from '../dist/cli/main.js';

main(process.argv).then((code) => { process.exitCode = code; });

/**
 * A worker thread of the descriptor pool: receives patch files, decodes each
 * (sharp) and answers with its descriptors; images never leave the worker.
 */
import { parentPort } from 'node:worker_threads';
import { readFile } from 'node:fs/promises';
import { decodeRgb } from './pixels.ts';
import { describePatch } from '../probe/describe.ts';

parentPort!.on('message', async (msg: { job: number; files: string[] }) => {
  try {
    const out = [];
    for (const file of msg.files) out.push(describePatch(await decodeRgb(await readFile(file))));
    parentPort!.postMessage({ job: msg.job, features: out });
  } catch (err) {
    parentPort!.postMessage({ job: msg.job, error: `${(err as Error).message}` });
  }
});

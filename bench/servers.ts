// Local image servers for the benchmarks (127.0.0.1 only); reuses the test helpers.
export { startProcessorServer } from '../tests/servers/processor.ts';
export { startStaticServer } from '../tests/servers/static.ts';
export { startIipsrv, pyramidalTiff } from '../tests/servers/iipsrv.ts';
export { truthImage } from '../tests/servers/ground-truth.ts';

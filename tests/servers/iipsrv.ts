import { spawn, spawnSync, ChildProcess } from 'node:child_process';
import { mkdir, writeFile } from 'node:fs/promises';
import { join } from 'node:path';
import { IIPSRV_FCGI } from './availability.ts';
import { freePort, waitForUrl } from './net-util.ts';

export interface RunningServer {
  base: string;
  stop(): Promise<void>;
}

/** Writes a tiled pyramidal TIFF (deflate, lossless tiles) with libvips from a `.v` or PNG file. */
export function pyramidalTiff(input: string, output: string): void {
  const r = spawnSync('vips', ['tiffsave', input, output, '--tile', '--pyramid', '--compression', 'deflate', '--tile-width', '256', '--tile-height', '256'], { encoding: 'utf8' });
  if (r.status !== 0) throw new Error(`vips tiffsave failed: ${r.stderr}`);
}

/**
 * Starts iipsrv (IIIF Image API 2, level 1) behind lighttpd FastCGI on 127.0.0.1.
 * lighttpd spawns iipsrv on a unix socket, so the only TCP listener is loopback.
 * `maxCvt` sets iipsrv's MAX_CVT (advertised as maxWidth/maxHeight).
 */
export async function startIipsrv(work: string, images: string, opts: { maxCvt?: number } = {}): Promise<RunningServer> {
  const port = await freePort();
  const dir = join(work, `iip-${port}`);
  await mkdir(join(dir, 'www'), { recursive: true });
  const env: Record<string, string> = {
    FILESYSTEM_PREFIX: `${images}/`,
    URI_MAP: 'iiif=>IIIF',
    LOGFILE: join(dir, 'iipsrv.log'),
    VERBOSITY: '1',
    CORS: '*',
    MAX_IMAGE_CACHE_SIZE: '10',
    ...(opts.maxCvt ? { MAX_CVT: String(opts.maxCvt) } : {}),
  };
  const conf = `server.modules = ( "mod_fastcgi" )
server.bind = "127.0.0.1"
server.port = ${port}
server.document-root = "${dir}/www"
server.errorlog = "${dir}/error.log"
fastcgi.server = ( "/iiif" => ((
  "socket" => "${dir}/iipsrv.sock",
  "bin-path" => "${IIPSRV_FCGI}",
  "check-local" => "disable",
  "max-procs" => 1,
  "bin-environment" => ( ${Object.entries(env).map(([k, v]) => `"${k}" => "${v}"`).join(', ')} )
)) )
`;
  await writeFile(join(dir, 'lighttpd.conf'), conf);
  const child: ChildProcess = spawn('lighttpd', ['-D', '-f', join(dir, 'lighttpd.conf')], { stdio: 'ignore' });
  const base = `http://127.0.0.1:${port}/iiif`;
  await waitForUrl(`http://127.0.0.1:${port}/`, child);
  return {
    base,
    stop: () =>
      new Promise<void>((resolve) => {
        if (child.exitCode !== null) return resolve();
        child.once('exit', () => resolve());
        child.kill('SIGTERM');
      }),
  };
}

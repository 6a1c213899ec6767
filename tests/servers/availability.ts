import { existsSync } from 'node:fs';
import { spawnSync } from 'node:child_process';

export const IIPSRV_FCGI = '/usr/lib/iipimage-server/iipsrv.fcgi';

/**
 * Whether what a group of tests needs from Debian is here. In CI
 * (SWATCHBOOK_REQUIRE_SERVERS set, as .ci/run does) a missing package is a failure, never a skip;
 * elsewhere the tests skip with a one-line hint naming the packages.
 */
function available(have: boolean, what: string, packages: string): boolean {
  if (!have && process.env.SWATCHBOOK_REQUIRE_SERVERS) throw new Error(`SWATCHBOOK_REQUIRE_SERVERS is set but ${what} is missing (apt-get install -y ${packages})`);
  if (!have) console.warn(`skipping the tests that need ${what}: apt-get install -y ${packages} to run them`);
  return have;
}

const python = (modules: string) => spawnSync('/usr/bin/python3', ['-c', `import ${modules}`], { encoding: 'utf8' }).status === 0;

/** The Debian packages for the Image API 2 server (iipsrv behind lighttpd, libvips tools). */
export function iipAvailable(): boolean {
  const have = existsSync(IIPSRV_FCGI) && spawnSync('lighttpd', ['-v']).status === 0 && spawnSync('vips', ['--version']).status === 0;
  return available(have, 'iipimage-server, lighttpd or libvips-tools', 'iipimage-server lighttpd libvips-tools');
}

/** Debian's Python with torchvision (the reference loader). */
export function torchvisionAvailable(): boolean {
  return available(python('torchvision'), 'torchvision for /usr/bin/python3', 'python3-torchvision');
}

/** Debian's Python with scikit-image and scikit-learn (independent references for the probe). */
export function scikitAvailable(): boolean {
  return available(python('skimage, sklearn'), 'scikit-image and scikit-learn for /usr/bin/python3', 'python3-skimage python3-sklearn');
}

/** The real Chromium binary of Debian's chromium-headless-shell (or chromium), for the browser test. */
export const CHROMIUM_PATHS = ['/usr/lib/chromium/chromium-headless-shell', '/usr/lib/chromium/chromium'];

/** Debian's headless Chromium, and a private network namespace to run it in (unshare, as root). */
export function chromiumAvailable(): boolean {
  const have = CHROMIUM_PATHS.some((p) => existsSync(p)) && spawnSync('unshare', ['--net', 'true']).status === 0;
  return available(have, 'Chromium (chromium-headless-shell) or unshare --net', 'chromium-headless-shell util-linux');
}

/** Debian's Slurm (controller, node daemon, client) and munge, as root: the batch-system test starts its own. */
export function slurmAvailable(): boolean {
  const have = ['slurmctld', 'slurmd', 'sbatch', 'squeue', 'scontrol', 'sinfo', 'munged', 'munge'].every((b) => spawnSync('sh', ['-c', `command -v ${b}`]).status === 0) && process.getuid?.() === 0;
  return available(have, 'Slurm and munge (as root)', 'munge slurmctld slurmd slurm-client');
}

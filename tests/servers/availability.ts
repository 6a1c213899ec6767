import { existsSync } from 'node:fs';
import { spawnSync } from 'node:child_process';

export const IIPSRV_FCGI = '/usr/lib/iipimage-server/iipsrv.fcgi';

/**
 * Whether the Debian packages for the Image API 2 server are here. In CI
 * (SWATCHBOOK_REQUIRE_SERVERS set, as .ci/run does) a missing package is a failure, never a skip.
 */
export function iipAvailable(): boolean {
  const have = existsSync(IIPSRV_FCGI) && spawnSync('lighttpd', ['-v']).status === 0 && spawnSync('vips', ['--version']).status === 0;
  if (!have && process.env.SWATCHBOOK_REQUIRE_SERVERS) {
    throw new Error('SWATCHBOOK_REQUIRE_SERVERS is set but iipimage-server, lighttpd or libvips-tools is missing (apt-get install -y iipimage-server lighttpd libvips-tools)');
  }
  if (!have) console.warn('skipping the iipsrv tests: apt-get install -y iipimage-server lighttpd libvips-tools to run them');
  return have;
}

/** Debian's Python with torchvision (the reference loader). Required in CI like the image servers. */
export function torchvisionAvailable(): boolean {
  const have = spawnSync('/usr/bin/python3', ['-c', 'import torchvision'], { encoding: 'utf8' }).status === 0;
  if (!have && process.env.SWATCHBOOK_REQUIRE_SERVERS) {
    throw new Error('SWATCHBOOK_REQUIRE_SERVERS is set but /usr/bin/python3 cannot import torchvision (apt-get install -y python3-torchvision)');
  }
  if (!have) console.warn('skipping the torchvision loader test: apt-get install -y python3-torchvision to run it');
  return have;
}

/** Debian's Python with scikit-image and scikit-learn (independent references for the probe). Required in CI. */
export function scikitAvailable(): boolean {
  const have = spawnSync('/usr/bin/python3', ['-c', 'import skimage, sklearn'], { encoding: 'utf8' }).status === 0;
  if (!have && process.env.SWATCHBOOK_REQUIRE_SERVERS) {
    throw new Error('SWATCHBOOK_REQUIRE_SERVERS is set but /usr/bin/python3 cannot import skimage and sklearn (apt-get install -y python3-skimage python3-sklearn)');
  }
  if (!have) console.warn('skipping the scikit-image/scikit-learn comparisons: apt-get install -y python3-skimage python3-sklearn to run them');
  return have;
}

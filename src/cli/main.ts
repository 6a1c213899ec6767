/** Placeholder until the CLI issue lands: tells the user plainly what exists. */
export async function main(_argv: string[]): Promise<number> {
  process.stderr.write('swatchbook: the command line is not built yet; see README.md for the status.\n');
  return 2;
}

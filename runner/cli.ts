/** Command-line entry point (placeholder while the runner is built). */
export async function main(_argv: string[]): Promise<number> {
  process.stdout.write('dendrolog\n');
  return 0;
}

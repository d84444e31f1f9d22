// Placeholder until the board command lands in this session; replaced by its real module.
export async function main(_argv: string[]): Promise<number> {
  process.stderr.write('streamfence board: not built yet\n');
  return 2;
}

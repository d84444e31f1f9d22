/** Writing report pages next to the replay or tune output. */
import { writeFile } from 'node:fs/promises';
import { join } from 'node:path';
import { StreamfenceError } from '../../libs/errors/index.js';
import { fileProblem } from '../fs-errors.js';

export const REPORT_FILE = 'report.html';

/** Write `html` to dir/name and return the path. */
export async function writeReport(dir: string, html: string, name = REPORT_FILE): Promise<string> {
  const path = join(dir, name);
  try {
    await writeFile(path, html);
  } catch (err) {
    throw new StreamfenceError(
      'OUTPUT_UNWRITABLE',
      `cannot write the report "${path}": ${fileProblem(err)}; choose another --out folder`,
      { cause: err },
    );
  }
  return path;
}

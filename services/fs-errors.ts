/**
 * File-system failures in words. Node's own text ("EEXIST: file already exists, mkdir 'out'") names
 * the system call, not what to change, so no command shows it: each says what is wrong with the path
 * in plain words, and the error keeps the original as its cause for a debug log.
 */

const WORDS: Record<string, string> = {
  ENOENT: 'no such file or folder',
  EEXIST: 'a file of that name is in the way (a folder is needed)',
  ENOTDIR: 'a part of the path is a file, not a folder',
  EISDIR: 'it is a folder, not a file',
  EACCES: 'permission denied',
  EPERM: 'permission denied',
  EROFS: 'the file system is read-only',
  ENOSPC: 'the disk is full',
  EDQUOT: 'the disk quota is used up',
  ENAMETOOLONG: 'the name is too long',
  EMFILE: 'too many files are open',
  ELOOP: 'the path has a symbolic-link loop',
  EBUSY: 'the file is busy',
  EIO: 'input/output error on the device',
  Z_DATA_ERROR: 'the gzip data is corrupt',
  Z_BUF_ERROR: 'the gzip data is cut short',
};

/** The errno-style code of a failure, if it has one. */
export function errorCode(err: unknown): string | undefined {
  const code = (err as { code?: unknown } | null | undefined)?.code;
  return typeof code === 'string' ? code : undefined;
}

/** A plain-words reason for a file-system failure (never node's raw "EXXX: ..., syscall" text). */
export function fileProblem(err: unknown): string {
  const code = errorCode(err);
  if (code !== undefined && WORDS[code] !== undefined) return WORDS[code];
  if (code !== undefined) return `the system refused it (${code})`;
  const message = err instanceof Error ? err.message : String(err);
  // Strip node's "ECODE: text, syscall 'path'" shape down to the text if it slipped through anyway.
  return message.replace(/^E[A-Z]+:\s*/, '').replace(/,\s*\w+\s+'[^']*'.*$/, '');
}

/**
 * Every exported symbol of libs/ carries a doc comment (the public surface a newcomer reads
 * first). Parsed with the TypeScript compiler, so a comment that is not JSDoc (`//`) does not count.
 */
import { readdirSync, readFileSync } from 'node:fs';
import path from 'node:path';
import { fileURLToPath } from 'node:url';
import ts from 'typescript';
import { describe, expect, it } from 'vitest';

const ROOT = path.resolve(path.dirname(fileURLToPath(import.meta.url)), '../..');

function libFiles(): string[] {
  return readdirSync(path.join(ROOT, 'libs'), { recursive: true, withFileTypes: true })
    .filter((entry) => entry.isFile() && entry.name.endsWith('.ts'))
    .map((entry) => path.join(entry.parentPath, entry.name));
}

const isExported = (node: ts.Node): boolean =>
  ts.canHaveModifiers(node) &&
  (ts.getModifiers(node) ?? []).some((m) => m.kind === ts.SyntaxKind.ExportKeyword);

function undocumented(file: string): string[] {
  const source = ts.createSourceFile(file, readFileSync(file, 'utf8'), ts.ScriptTarget.ES2022, true);
  const missing: string[] = [];
  for (const statement of source.statements) {
    if (!isExported(statement)) continue;
    const documented = ts.getJSDocCommentsAndTags(statement).length > 0;
    const names = ts.isVariableStatement(statement)
      ? statement.declarationList.declarations.map((declaration) => declaration.name.getText(source))
      : [(statement as ts.DeclarationStatement).name?.getText(source) ?? '(unnamed)'];
    if (!documented) {
      const line = source.getLineAndCharacterOfPosition(statement.getStart(source)).line + 1;
      for (const name of names) missing.push(`${path.relative(ROOT, file)}:${line} ${name}`);
    }
  }
  return missing;
}

describe('libs/ public surface', () => {
  it('documents every exported symbol', () => {
    expect(libFiles().flatMap(undocumented)).toEqual([]);
  });
});

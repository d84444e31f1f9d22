/**
 * The board page's script is TypeScript (services/board/page/browser/board.ts, type-checked by
 * `npm run lint`), served as one file: script.ts must be what `npm run board:script` makes of the
 * current board.ts, and what it serves must load nothing else (no import, nothing from another
 * origin).
 */
import { readFileSync } from 'node:fs';
import { describe, expect, it } from 'vitest';
import { BOARD_SCRIPT_MODULE, boardScriptModule } from '../../../services/board/page/browser/generate.js';
import { BOARD_HTML } from '../../../services/board/page/html.js';
import { BOARD_JS } from '../../../services/board/page/script.js';

describe('board page script', () => {
  it('script.ts is up to date with board.ts (run npm run board:script after editing board.ts)', () => {
    expect(readFileSync(BOARD_SCRIPT_MODULE, 'utf8')).toBe(boardScriptModule());
  });

  it('imports nothing and names no other origin', () => {
    expect(BOARD_JS).not.toMatch(/^\s*import\b|\bimport\s*\(/m);
    const urls = [...BOARD_JS.matchAll(/[a-z]+:\/\/[^'"\s]+/g)].map((match) => match[0]);
    // The SVG namespace is a name, not a fetch.
    expect(urls).toEqual(['http://www.w3.org/2000/svg']);
    expect(BOARD_JS.trimEnd().endsWith('export {};')).toBe(true);
  });

  it('is the only script the page loads, as a module from this server', () => {
    const scripts = [...BOARD_HTML.matchAll(/<script\b[^>]*>/g)].map((match) => match[0]);
    expect(scripts).toEqual(['<script type="module" src="/assets/board.js">']);
  });
});

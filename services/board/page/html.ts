/**
 * The board page's HTML shell. The caution is in the markup itself (not added by script), so it is
 * visible even before the script runs or if it fails.
 */
import { NOTICE } from '../../../libs/schema/notice.js';

const esc = (s: string): string =>
  s.replace(/&/g, '&amp;').replace(/</g, '&lt;').replace(/>/g, '&gt;').replace(/"/g, '&quot;');

export const BOARD_HTML = `<!doctype html>
<html lang="en">
<head>
<meta charset="utf-8">
<meta name="viewport" content="width=device-width, initial-scale=1">
<title>streamfence board</title>
<link rel="icon" href="data:,">
<link rel="stylesheet" href="/assets/board.css">
</head>
<body>
<header class="top">
  <h1>streamfence <span class="sub">operator board</span></h1>
  <div class="controls">
    <label for="operator">Operator</label>
    <input id="operator" type="text" maxlength="80" autocomplete="off" placeholder="your name">
    <span id="operator-state" class="muted"></span>
    <label for="token" id="token-label" hidden>Board token</label>
    <input id="token" type="password" autocomplete="off" aria-describedby="token-prompt" hidden>
    <button type="button" id="token-use" hidden>Use token</button>
    <span id="token-prompt" class="token-prompt" role="alert" hidden></span>
    <button type="button" id="large-type" aria-pressed="false">Large type</button>
    <span id="link" class="link" role="status">connecting…</span>
  </div>
</header>
<section id="rate" class="rate" aria-label="Alert rate"></section>
<section id="health" class="health" aria-label="Alert-system health" hidden></section>
<div id="flood" class="flood" role="alert" hidden></div>
<div id="waiting" class="waiting" role="status" hidden></div>
<div id="message" class="message" role="status" aria-live="polite"></div>
<main>
  <section aria-labelledby="h-active">
    <h2 id="h-active">Needs attention <span id="n-active" class="count"></span></h2>
    <ol id="active" class="cards"></ol>
    <p id="active-empty" class="empty" hidden>No active alerts.</p>
  </section>
  <section aria-labelledby="h-shelved">
    <h2 id="h-shelved">Shelved <span id="n-shelved" class="count"></span></h2>
    <ol id="shelved" class="cards"></ol>
    <p id="shelved-empty" class="empty" hidden>Nothing shelved.</p>
  </section>
  <section aria-labelledby="h-cleared">
    <h2 id="h-cleared">Recently cleared <span id="n-cleared" class="count"></span></h2>
    <ol id="cleared" class="cards compact"></ol>
    <p id="cleared-empty" class="empty" hidden>Nothing cleared yet.</p>
  </section>
</main>
<dialog id="shelve-dialog" aria-labelledby="shelve-title">
  <form id="shelve-form" method="dialog">
    <h2 id="shelve-title">Shelve alert</h2>
    <p id="shelve-what" class="muted"></p>
    <label for="shelve-reason">Reason (required)</label>
    <textarea id="shelve-reason" maxlength="500" rows="3" aria-required="true"></textarea>
    <fieldset>
      <legend>Shelve for</legend>
      <label><input type="radio" name="shelve-minutes" value="15" checked> 15 minutes</label>
      <label><input type="radio" name="shelve-minutes" value="60"> 1 hour</label>
      <label><input type="radio" name="shelve-minutes" value="480"> 8 hours</label>
    </fieldset>
    <p id="shelve-error" class="error" role="alert"></p>
    <div class="row">
      <button type="submit" id="shelve-ok" value="ok">Shelve</button>
      <button type="button" id="shelve-cancel">Cancel</button>
    </div>
  </form>
</dialog>
<footer class="caution" id="caution" role="note"><strong>Caution</strong> ${esc(NOTICE)}</footer>
<script type="module" src="/assets/board.js"></script>
</body>
</html>
`;

// Loads a sluice report in Debian's Chromium through playwright-core, and prints as JSON what the
// page showed: console and page errors, any request that was not for the file itself, and the
// figures its charts carry in data- attributes. It saves a screenshot of the whole page.
//
//   node testdata/report/check.mjs REPORT.html SCREENSHOT.png
//
// cmd/sluice/report_test.go runs it and judges the output; this script only reports.
import { chromium } from 'playwright-core';
import { mkdtempSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join, resolve } from 'node:path';
import { pathToFileURL } from 'node:url';

const [report, shot] = process.argv.slice(2);
if (!report || !shot) {
  console.error('usage: node check.mjs REPORT.html SCREENSHOT.png');
  process.exit(2);
}

// A fresh profile each time, so nothing from an earlier run (cache, settings) can help the page.
const profile = mkdtempSync(join(tmpdir(), 'sluice-report-'));
const out = { consoleErrors: [], pageErrors: [], requests: [] };
let context;
try {
  context = await chromium.launchPersistentContext(profile, {
    executablePath: '/usr/bin/chromium',
    headless: true,
    args: ['--headless', '--no-sandbox', '--disable-gpu', '--disable-quic', '--no-first-run',
      '--disable-background-networking', '--disable-component-update', '--disable-sync'],
    viewport: { width: 1100, height: 900 },
    timeout: 60000,
  });
  const page = context.pages()[0] ?? await context.newPage();
  const url = pathToFileURL(resolve(report)).href;
  page.on('console', (m) => { if (m.type() === 'error') out.consoleErrors.push(m.text()); });
  page.on('pageerror', (e) => out.pageErrors.push(String(e)));
  page.on('request', (r) => { if (r.url() !== url) out.requests.push(r.url()); });
  await page.goto(url, { waitUntil: 'load', timeout: 30000 });

  Object.assign(out, await page.evaluate(() => {
    const num = (el, name) => Number(el.getAttribute(name));
    const ledger = document.querySelector('#ledger-bar');
    const hist = document.querySelector('#histogram');
    // The bars as laid out on screen, each with the count it stands for.
    const bins = [...hist.querySelectorAll('g.bin')].map((g) => ({
      lo: num(g, 'data-lo'), hi: num(g, 'data-hi'), kept: num(g, 'data-kept'), dropped: num(g, 'data-dropped'),
      bars: [...g.querySelectorAll('rect')].map((r) => ({
        count: num(g, r.classList.contains('kept') ? 'data-kept' : 'data-dropped'),
        height: r.getBoundingClientRect().height,
      })),
    }));
    // What is drawn, not only what is stated: the parts of the ledger bar as laid out on screen.
    const parts = [...ledger.querySelectorAll('rect[data-part]')].map((r) => ({
      part: r.getAttribute('data-part'), flops: num(r, 'data-flops'), width: r.getBoundingClientRect().width,
    }));
    return {
      title: document.title,
      ledger: {
        budget: num(ledger, 'data-budget-flops'), selection: num(ledger, 'data-selection-flops'),
        training: num(ledger, 'data-training-flops'), left: num(ledger, 'data-left-flops'),
        total: num(ledger, 'data-total-flops'), parts,
      },
      histogram: {
        rows: num(hist, 'data-rows'), keptRows: num(hist, 'data-kept-rows'), zeroRows: num(hist, 'data-zero-rows'),
        unscoredRows: num(hist, 'data-unscored-rows'), countScale: hist.getAttribute('data-count-scale'),
        unscored: [...document.querySelectorAll('#unscored li')].map((li) => ({
          reason: li.getAttribute('data-reason'), rows: num(li, 'data-rows'), text: li.textContent,
        })),
        cutScore: hist.hasAttribute('data-cut-score') ? num(hist, 'data-cut-score') : null,
        cutRank: hist.hasAttribute('data-cut-rank') ? num(hist, 'data-cut-rank') : null,
        binWidth: num(hist, 'data-bin-width'), bins,
      },
      files: [...document.querySelectorAll('#files-chart g.file')].map((g) => ({
        file: g.getAttribute('data-file'), label: g.querySelector('text').textContent, keptTokens: num(g, 'data-kept-tokens'),
        poolTokens: num(g, 'data-pool-tokens'), keptRows: num(g, 'data-kept-rows'),
      })),
      terms: [...document.querySelectorAll('#terms-chart g.term')].map((g) => ({
        term: g.getAttribute('data-term'), weight: num(g, 'data-weight'),
        targetRows: num(g, 'data-target-rows'), df: num(g, 'data-df'),
      })),
      sample: [...document.querySelectorAll('article.card')].map((a) => ({
        sample: a.getAttribute('data-sample'), id: a.getAttribute('data-id'), rank: num(a, 'data-rank'),
        kept: a.getAttribute('data-kept') === 'true',
        raw: a.querySelector('pre.raw') !== null,
        fields: [...a.querySelectorAll('.field .label')].map((l) => l.textContent),
        explained: a.querySelectorAll('tbody tr').length,
        // Text fields keep their line breaks and runs of spaces.
        whiteSpace: [...a.querySelectorAll('.field pre')].map((p) => getComputedStyle(p).whiteSpace),
      })),
      method: document.querySelector('p.lead').textContent.replace(/\s+/g, ' '),
      // Text that overflows its box would be cut off on screen.
      pageWidth: document.documentElement.scrollWidth,
      viewWidth: document.documentElement.clientWidth,
    };
  }));
  await page.screenshot({ path: shot, fullPage: true });
} catch (e) {
  out.fatal = String(e && e.stack || e);
} finally {
  if (context) await context.close().catch(() => {});
  rmSync(profile, { recursive: true, force: true });
}
console.log(JSON.stringify(out));
process.exit(out.fatal ? 1 : 0);

/**
 * Event text in the backtest's pull-request comment (GitHub Flavored Markdown)
 * and in the terminal. In Markdown, text from apps must not become a mention,
 * a link, an image, HTML or table structure; in the terminal, escape
 * sequences (ECMA-48 CSI, ESC and the 8-bit C1 introducer U+009B) must not
 * reach it.
 */
import { describe, expect, it } from 'vitest';
import { formatDiff } from '../../service/cli/commands/backtest.js';
import { terminalSafe } from '../../service/cli/terminal.js';
import type { BacktestResult } from '../../service/pipeline/backtest.js';

const HOSTILE = 'zone `x` @octocat #12 ![pixel](https://evil.example/p.png) [click](javascript:alert(1)) <img src=x onerror=alert(1)> | **bold** _i_ \u001b[31mred\u001b[0m';

function result(title: string, fingerprint: string): BacktestResult {
  return {
    from: '2026-06-01',
    to: '2026-06-30',
    flows: ['monthly_pass'],
    findings: [],
    incidents: [{ fingerprint, openedDay: '2026-06-10', flows: ['monthly_pass'], causeLabel: 'release', title, severity: 'warn', muted: false } as BacktestResult['incidents'][number]],
    notReady: [],
    warnings: [],
    millis: 1,
  };
}

describe('the pull-request comment', () => {
  it('shows event text as text: no mention, link, image, HTML, table cell or escape code', () => {
    const markdown = formatDiff('main', result('nothing', 'a'), result(HOSTILE, 'b'));
    const line = markdown.split('\n').find((l) => l.includes('zone'))!;
    // eslint-disable-next-line no-control-regex
    expect(line).not.toMatch(/@octocat|#12|!\[|\]\(|<img|(?<!\\)\||(?<!\\)\*\*|(?<!\\)`|\u001b/);
    expect(line).toContain('\\!\\[pixel\\]');
    expect(line).toContain('&lt;img');
  });
});

describe('terminalSafe', () => {
  it.each([
    ['\u001b[2J\u001b[31mred\u001b[0m', '[2J[31mred[0m'],
    ['a\u009b31mb', 'a31mb'],
    ['bell\u0007 and \u0008back', 'bell and back'],
    ['two\nlines\tkept', 'two\nlines\tkept'],
    ['\u202eevil', 'evil'],
  ])('%j -> %j', (input, expected) => {
    expect(terminalSafe(input)).toBe(expected);
  });

  it('keeps JSON valid while escaping the C1 controls that JSON.stringify leaves raw', () => {
    const json = terminalSafe(JSON.stringify({ name: 'x\u009by\u001b' }), { json: true });
    // eslint-disable-next-line no-control-regex
    expect(json).not.toMatch(/[\u0080-\u009f\u001b]/);
    expect(JSON.parse(json)).toEqual({ name: 'x\u009by\u001b' });
  });
});

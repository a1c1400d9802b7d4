import { describe, expect, it } from 'vitest';
import { createHash } from 'node:crypto';
import Ajv from 'ajv';
import fc from 'fast-check';
import { renderReportHtml, inlineSvg, type ReportModel } from '../src/report/html.js';
import { escapeHtml } from '../src/report/escape.js';
import { linePlot, barPlot } from '../src/report/svg.js';
import { resultsSchema } from '../src/report/schema.js';
import { CAUTION } from '../src/caution.js';
import { envelope, toJson } from '../src/output.js';

const HOSTILE = '<script>alert(1)</script>';
const QUOTES = `"&'`;

/** SHA-256("abc") — FIPS 180-2, Appendix B.1 test vector. */
const SHA256_ABC = 'ba7816bf8f01cfea414140de5dae2223b00361a396177a9cb410ff61f20015ad';

function model(): ReportModel {
  const x = Array.from({ length: 40 }, (_, i) => 0.05 * (i + 1));
  return {
    title: `Report on ${HOSTILE} ${QUOTES}`,
    generated: '2025-01-02T03:04:05Z',
    version: '0.1.0',
    command: `sojourn report ${HOSTILE}.xyz --label ${QUOTES}`,
    inputs: [{ path: `/data/${HOSTILE}${QUOTES}.xyz`, sha256: SHA256_ABC, bytes: 1234567, format: 'xyz', frames: 1000 }],
    options: { temperature: '300 K', species: [HOSTILE] },
    summary: [
      { quantity: `D(${HOSTILE})`, value: 2.34567, uncertainty: 0.01234, unit: '10⁻⁹ m²/s', method: `Einstein ${QUOTES}`, window: '20–200 ps', verdict: 'converged', ok: true },
      { quantity: 'η', value: 0.85, uncertainty: null, unit: 'mPa·s', method: 'Green–Kubo', window: '0–5 ps', verdict: 'plateau not reached', ok: false },
    ],
    sections: [
      {
        id: 'diffusion',
        title: `Diffusion ${HOSTILE}`,
        text: `First paragraph ${QUOTES}.\n\nSecond paragraph.`,
        figures: [
          {
            svg: linePlot({ title: `MSD ${HOSTILE}`, xLabel: 't (ps)', yLabel: 'MSD (Å²)', series: [{ name: `Na ${QUOTES}`, x, y: x.map((t) => 6 * t) }], markers: { spans: [{ from: 0.5, to: 1.5, label: 'fit' }] } }),
            caption: `Mean-squared displacement ${HOSTILE}`,
          },
        ],
        tables: [{ caption: `per species ${QUOTES}`, headers: ['species', `D ${HOSTILE}`], rows: [[HOSTILE, '1.0']] }],
      },
      {
        id: 'diffusion', // duplicate id on purpose
        title: 'Coordination',
        figures: [{ svg: barPlot({ title: 'Neighbours', xLabel: 'count', yLabel: 'fraction', bars: [{ label: '5', value: 0.4 }, { label: '6', value: 0.6 }] }), caption: 'Neighbour counts' }],
      },
    ],
    convergence: [
      { name: `blocking ${HOSTILE}`, verdict: 'plateau reached', reliable: true },
      { name: 'Green–Kubo integral', verdict: 'no plateau', reliable: false },
    ],
    warnings: [`frame 12: ${HOSTILE} ${QUOTES}`],
  };
}

describe('escapeHtml', () => {
  it('escapes the five characters & < > " \' (WHATWG HTML "Writing HTML documents"; XML 1.0 §2.4)', () => {
    expect(escapeHtml(`<a href="x">'&'</a>`)).toBe('&lt;a href=&quot;x&quot;&gt;&#39;&amp;&#39;&lt;/a&gt;');
    expect(escapeHtml('plain Å² text')).toBe('plain Å² text');
  });
  it('replaces control characters HTML does not allow with U+FFFD (WHATWG HTML, control-character-in-input-stream)', () => {
    expect(escapeHtml('a\u0000b\u0007c\u007Fd')).toBe('a\uFFFDb\uFFFDc\uFFFDd');
    expect(escapeHtml('tab\tnew\nline\r')).toBe('tab\tnew\nline\r');
  });
  it('round-trips: decoding the references by their HTML definitions gives the text back', () => {
    // Decoding table from the HTML standard's named character references (&amp; &lt; &gt;
    // &quot;) and the decimal reference &#39; = U+0027.
    const decode = (s: string) =>
      s.replace(/&(amp|lt|gt|quot|#39);/g, (_m, n: string) => ({ amp: '&', lt: '<', gt: '>', quot: '"', '#39': "'" })[n]!);
    fc.assert(
      // ASCII strings (all C0 controls and the five specials are frequent) and general Unicode.
      fc.property(fc.oneof(fc.string({ unit: 'binary-ascii' }), fc.string({ unit: 'grapheme' })), (s) => {
        const clean = s.replace(/[\u0000-\u0008\u000B\u000E-\u001F\u007F-\u009F]/g, '\uFFFD');
        const out = escapeHtml(s);
        expect(out).not.toMatch(/[<>"']/);
        expect(out).not.toMatch(/&(?!(amp|lt|gt|quot|#39);)/);
        expect(decode(out)).toBe(clean);
      }),
    );
  });
});

describe('HTML report', () => {
  const html = renderReportHtml(model());

  it('is an HTML5 document with no script anywhere', () => {
    expect(html.startsWith('<!DOCTYPE html>')).toBe(true);
    expect(html).not.toMatch(/<script/i);
    expect(html).not.toMatch(/\son[a-z]+\s*=/i); // no event-handler attributes
  });

  it('escapes hostile labels everywhere they appear', () => {
    const escaped = '&lt;script&gt;alert(1)&lt;/script&gt;';
    // title, h1, command, input path, options, summary, section title, caption, table, convergence, warning
    expect(html.split(escaped).length - 1).toBeGreaterThanOrEqual(11);
    expect(html).toContain('&quot;&amp;&#39;'); // "&' via escapeHtml
    expect(html).toContain('&quot;&amp;&apos;'); // "&' inside the SVG (XMLBuilder, XML 1.0 §2.4)
  });

  it('refers to nothing outside the file', () => {
    expect(html).not.toMatch(/https?:/i);
    expect(html).not.toMatch(/\ssrc\s*=/i);
    expect(html).not.toMatch(/<(link|img|iframe|object|embed|base)\b/i);
    expect(html).not.toMatch(/@import/i);
    for (const m of html.matchAll(/url\(([^)]*)\)/g)) expect(m[1].startsWith('#')).toBe(true);
    for (const m of html.matchAll(/\shref="([^"]*)"/g)) expect(m[1].startsWith('#')).toBe(true);
    expect(html).toContain(`content="default-src 'none'; style-src 'unsafe-inline'; img-src data:"`);
  });

  it('shows the caution prominently, before the summary, and again in the footer', () => {
    const first = html.indexOf(escapeHtml(CAUTION));
    expect(first).toBeGreaterThan(0);
    expect(first).toBeLessThan(html.indexOf('id="summary"'));
    expect(html.slice(0, first)).toMatch(/<aside class="caution"[^>]*>[^<]*<span[^>]*>⚠<\/span>$/);
    expect(html.indexOf(escapeHtml(CAUTION), first + 1)).toBeGreaterThan(html.indexOf('<footer>'));
  });

  it('shows inputs, summary values with GUM rounding and verdicts marked by symbol as well as colour', () => {
    expect(html).toContain('sojourn 0.1.0');
    expect(html).toContain('2025-01-02T03:04:05Z');
    expect(html).toContain(SHA256_ABC);
    expect(html).toContain('1\u202F234\u202F567 bytes (1.18 MiB)'); // 1234567/1048576 = 1.177… MiB (IEC 80000-13)
    // Uncertainty to two significant figures (JCGM 100:2008 §7.2.6): 2.34567 ± 0.01234 → 2.346 ± 0.012.
    expect(html).toContain('2.346 ± 0.012');
    expect(html).toContain('0.85 (no uncertainty estimate)');
    expect(html).toMatch(/<tr class="ok">.*✓.*converged/);
    expect(html).toMatch(/<tr class="bad">.*⚠.*plateau not reached/);
  });

  it('inlines every figure as SVG without a namespace URL, numbers figures, and keeps section ids unique', () => {
    expect(html.match(/<svg\b/g)).toHaveLength(2);
    expect(html).not.toContain('xmlns=');
    expect(html).toContain('<strong>Figure 1.</strong>');
    expect(html).toContain('<strong>Figure 2.</strong>');
    expect(html).toContain('id="sec-diffusion"');
    expect(html).toContain('id="sec-diffusion-2"');
    const ids = [...html.matchAll(/\sid="([^"]*)"/g)].map((m) => m[1]);
    expect(new Set(ids).size).toBe(ids.length);
  });

  it('refuses figure markup that could run code or load something', () => {
    const ok = linePlot({ title: 't', xLabel: 'x (s)', yLabel: 'y (m)', series: [{ name: 's', x: [1, 2], y: [1, 2] }] });
    expect(() => inlineSvg(ok)).not.toThrow();
    const bad = [
      '<svg xmlns="http://www.w3.org/2000/svg"><script>alert(1)</script></svg>',
      '<svg xmlns="http://www.w3.org/2000/svg" onload="alert(1)"></svg>',
      '<svg xmlns="http://www.w3.org/2000/svg"><a href="https://example.org/">x</a></svg>',
      '<svg xmlns="http://www.w3.org/2000/svg"><rect fill="url(https://example.org/p.svg#g)"/></svg>',
      '<svg xmlns="http://www.w3.org/2000/svg"><foreignObject><div>x</div></foreignObject></svg>',
      '<!DOCTYPE svg [<!ENTITY x "y">]><svg xmlns="http://www.w3.org/2000/svg">&x;</svg>',
      '<div>not svg</div>',
    ];
    for (const b of bad) expect(() => inlineSvg(b), b).toThrow(TypeError);
  });
});

describe('results.json schema', () => {
  const ajv = new Ajv({ strict: true, allErrors: false });
  const validate = ajv.compile(resultsSchema);
  const good = () =>
    JSON.parse(
      toJson({
        ...envelope(
          'report',
          [{ path: 'brine.xyz.gz', sha256: SHA256_ABC, bytes: 3, format: 'xyz', frames: 10 }],
          { temperature: 300 },
          {
            diffusion: { species: [{ name: 'Na', D: { value: 1.3e-9, uncertainty: 0.1e-9, unit: 'm²/s' }, window: { from: 20, to: 200, unit: 'ps' } }] },
            viscosity: { eta: { value: 8.5e-4, uncertainty: null, unit: 'Pa s', converged: false, reason: 'no plateau' } },
            structure: { rdf: { r: Float64Array.from([1, 2]), g: Float64Array.from([0, 1]), unit: 'Å' } },
            convergence: [{ name: 'blocking', reliable: true }],
            joins: [],
          },
          [],
        ),
        started: '2025-01-02T03:04:05.123Z',
        durationSeconds: 12.5,
      }),
    );

  it('compiles in ajv strict mode and accepts an envelope built by src/output.ts', () => {
    // SHA-256 of "abc" from FIPS 180-2 B.1, checked against node:crypto as a second source.
    expect(createHash('sha256').update('abc').digest('hex')).toBe(SHA256_ABC);
    const doc = good();
    expect(validate(doc), JSON.stringify(validate.errors)).toBe(true);
  });

  it('refuses malformed inputs, quantities and top-level fields', () => {
    const cases: [string, (d: any) => void][] = [
      ['upper-case hash', (d) => (d.inputs[0].sha256 = SHA256_ABC.toUpperCase())],
      ['short hash', (d) => (d.inputs[0].sha256 = SHA256_ABC.slice(1))],
      ['negative bytes', (d) => (d.inputs[0].bytes = -1)],
      ['wrong tool', (d) => (d.tool = 'other')],
      ['missing uncertainty', (d) => delete d.results.diffusion.species[0].D.uncertainty],
      ['string value', (d) => (d.results.diffusion.species[0].D.value = '1.3e-9')],
      ['null value (NaN written by toJson)', (d) => (d.results.viscosity.eta.value = null)],
      ['negative uncertainty', (d) => (d.results.viscosity.eta.uncertainty = -1)],
      ['unit not a string', (d) => (d.results.viscosity.eta.unit = 1)],
      ['quantity in an unknown result key', (d) => (d.results.other = { deep: [{ q: { value: 1, unit: 'K' } }] })],
      ['structure not an object', (d) => (d.results.structure = 3)],
      ['bad start time', (d) => (d.started = '2 Jan 2025')],
      ['negative duration', (d) => (d.durationSeconds = -1)],
      ['unknown top-level key', (d) => (d.extra = 1)],
    ];
    for (const [what, spoil] of cases) {
      const d = good();
      spoil(d);
      expect(validate(d), what).toBe(false);
    }
  });

  it('keeps results free-form apart from quantities', () => {
    const d = good();
    d.results.other = { anything: [1, 'two', null, { unit: 'Å', values: [1, 2] }] };
    delete d.started;
    delete d.durationSeconds;
    expect(validate(d), JSON.stringify(validate.errors)).toBe(true);
  });
});

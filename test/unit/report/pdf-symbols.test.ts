// The report's status symbols written as one content string (statusSymbolsPath) put the very
// bytes in the page's content stream that pdfkit's own circle() / polygon() calls put there:
// the reference is pdfkit itself (its ellipse() of four Bézier quarters and polygon() of
// moveTo/lineTo/closePath), drawn on an uncompressed page and compared byte for byte.
import PDFDocument from 'pdfkit';
import { describe, expect, it } from 'vitest';
import { statusSymbolsPath } from '../../../server/report/pdf.ts';

/** The content-stream bytes of one page drawn by `draw` (uncompressed, so they can be compared). */
function pageContent(draw: (doc: PDFKit.PDFDocument) => void): string {
  const doc = new PDFDocument({ size: 'A4', compress: false, bufferPages: true });
  draw(doc);
  const page = (doc as unknown as { page: { content: { buffer: Uint8Array[] } } }).page;
  return Buffer.concat(page.content.buffer).toString('latin1');
}

// Awkward fractions on purpose: the rounding to 1e-6 (pdfkit's PDFObject.number) must agree too.
const points = [
  { x: 51.123456789, y: 700.98765432 },
  { x: 300, y: 400 },
  { x: 123.0000004, y: 88.3333333333 },
];

describe('status symbols as one content string', () => {
  for (const [status, r] of [['served', 1.6], ['served', 3.2], ['marginal', 2.3], ['unserved', 1.6]] as const) {
    it(`${status} at r = ${r} pt: the same operators as pdfkit's own shapes`, () => {
      const reference = pageContent((doc) => {
        for (const { x, y } of points) {
          if (status === 'served') doc.circle(x, y, r);
          else if (status === 'marginal') doc.polygon([x, y - r * 1.15], [x + r * 1.15, y], [x, y + r * 1.15], [x - r * 1.15, y]);
          else doc.polygon([x - r * 1.1, y - r * 0.8], [x + r * 1.1, y - r * 0.8], [x, y + r * 1.1]);
        }
        doc.fill();
      });
      const ours = pageContent((doc) => {
        doc.addContent(statusSymbolsPath(status, points, r));
        doc.fill();
      });
      expect(ours).toBe(reference);
      expect(ours).toContain(status === 'served' ? ' c\n' : ' l\n');
    });
  }
});

/** QR codes and printable labels of machines (qrcode for the symbol, sharp to rasterise the label). */
import QRCode from 'qrcode';
import sharp from 'sharp';
import { DomainError } from './errors';
import { getMachine, listMachines, type Machine } from './machines';
import { publicBaseUrl } from './settings';
import { escapeXml, LABEL_CAUTIONS, machinePageUrl, wrapText } from '@lib/labels';

const QR_OPTIONS = { errorCorrectionLevel: 'M' as const, margin: 2 };

async function machineOr404(id: string): Promise<Machine> {
  const m = /^[0-9a-f-]{36}$/i.test(id) ? await getMachine(id) : null;
  if (!m) throw new DomainError('not_found', 'not_found', 'No such machine.');
  return m;
}

export async function machineUrl(m: { code: string }): Promise<string> {
  return machinePageUrl(await publicBaseUrl(), m.code);
}

/** The bare QR symbol as SVG text. */
export async function qrSvg(text: string): Promise<string> {
  return QRCode.toString(text, { ...QR_OPTIONS, type: 'svg', color: { dark: '#1f1d1a', light: '#ffffff' } });
}

/** The bare QR symbol as PNG (black on white, `width` pixels). */
export async function qrPng(text: string, width = 600): Promise<Buffer> {
  return QRCode.toBuffer(text, { ...QR_OPTIONS, type: 'png', width });
}

/** One label (90 × 50 mm at 4 px/mm): QR on the left, the machine's name, its page and three cautions. */
export async function labelSvg(m: Machine, url: string): Promise<string> {
  const qr = (await qrSvg(url)).replace(/^<\?xml[^>]*>\s*/, '').replace('<svg ', '<svg x="8" y="12" width="176" height="176" ');
  const lines: string[] = [];
  let y = 38;
  lines.push(`<text x="194" y="${y}" font-size="22" font-weight="700">${escapeXml(m.name)}</text>`);
  y += 17;
  lines.push(`<text x="194" y="${y}" font-size="11" fill="#5b564f">Scan: status, check-in, faults</text>`);
  y += 19;
  for (const c of LABEL_CAUTIONS) {
    const wrapped = wrapText(c, 30);
    wrapped.forEach((w, i) => {
      lines.push(`<text x="${i === 0 ? 194 : 203}" y="${y}" font-size="9.5">${i === 0 ? '⚠ ' : ''}${escapeXml(w)}</text>`);
      y += 12;
    });
    y += 4;
  }
  return [
    '<svg xmlns="http://www.w3.org/2000/svg" width="90mm" height="50mm" viewBox="0 0 360 200" font-family="Work Sans, DejaVu Sans, Arial, sans-serif" fill="#1f1d1a">',
    `<title>${escapeXml(`${m.name} — ${url}`)}</title>`,
    '<rect x="1" y="1" width="358" height="198" rx="8" fill="#ffffff" stroke="#1f1d1a" stroke-width="2"/>',
    '<rect x="1" y="1" width="358" height="8" rx="4" fill="#c2410c"/>',
    qr,
    ...lines,
    `<text x="194" y="190" font-size="8" fill="#5b564f">${escapeXml(url.replace(/^https?:\/\//, ''))}</text>`,
    '</svg>',
  ].join('\n');
}

export async function labelSvgFor(id: string): Promise<{ machine: Machine; svg: string }> {
  const m = await machineOr404(id);
  return { machine: m, svg: await labelSvg(m, await machineUrl(m)) };
}

/** The label as PNG at 12 px/mm (1080 × 600), for printers that take images. */
export async function labelPngFor(id: string): Promise<{ machine: Machine; png: Buffer }> {
  const { machine, svg } = await labelSvgFor(id);
  const png = await sharp(Buffer.from(svg), { density: 288 }).resize(1080, 600).flatten({ background: '#ffffff' }).png().toBuffer();
  return { machine, png };
}

export async function qrFor(id: string): Promise<{ machine: Machine; url: string }> {
  const m = await machineOr404(id);
  return { machine: m, url: await machineUrl(m) };
}

/** Everything the label sheet needs: each machine with its URL and label SVG. */
export async function labelSheet(): Promise<{ machine: Machine; url: string; svg: string }[]> {
  const base = await publicBaseUrl();
  const out = [];
  for (const m of await listMachines()) {
    const url = machinePageUrl(base, m.code);
    out.push({ machine: m, url, svg: await labelSvg(m, url) });
  }
  return out;
}

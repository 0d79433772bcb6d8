// Saving a chart: the chart hands an export handle (SVG text, PNG blob); we pass it to the client, which
// opens a save dialog (Electron) or downloads the file (browser host).
import type { FigureExport } from '../components/charts/export-figure.ts';
import { app } from './store.svelte.ts';

async function blobToBase64(blob: Blob): Promise<string> {
  const bytes = new Uint8Array(await blob.arrayBuffer());
  let binary = '';
  for (let i = 0; i < bytes.length; i += 0x8000) binary += String.fromCharCode(...bytes.subarray(i, i + 0x8000));
  return btoa(binary);
}

export async function saveFigure(figure: FigureExport, format: 'svg' | 'png'): Promise<void> {
  await app.attempt('Could not save the figure', async () => {
    const fileName = `${figure.name}.${format}`;
    const r =
      format === 'svg'
        ? await app.api.save({ fileName, mime: 'image/svg+xml', text: figure.svg() })
        : await app.api.save({ fileName, mime: 'image/png', base64: await blobToBase64(await figure.png(2)) });
    if (r.saved) app.notice = `Figure saved${r.path ? ` to ${r.path}` : ` as ${fileName}`}.`;
  });
}

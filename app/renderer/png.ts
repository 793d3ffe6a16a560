/** PNG of a view: its SVG figures drawn onto a canvas (the figures carry their pictures as data: URLs). */

const MAX_SIDE = 8192;

function loadSvg(svg: SVGSVGElement): Promise<{ img: HTMLImageElement; w: number; h: number }> {
  const clone = svg.cloneNode(true) as SVGSVGElement;
  const box = svg.getBoundingClientRect();
  const w = Math.max(1, Math.round(box.width));
  const h = Math.max(1, Math.round(box.height));
  clone.setAttribute('width', String(w));
  clone.setAttribute('height', String(h));
  const text = new XMLSerializer().serializeToString(clone);
  const url = URL.createObjectURL(new Blob([text], { type: 'image/svg+xml' }));
  return new Promise((resolve, reject) => {
    const img = new Image();
    img.onload = () => { URL.revokeObjectURL(url); resolve({ img, w, h }); };
    img.onerror = () => { URL.revokeObjectURL(url); reject(new Error('the figure could not be drawn')); };
    img.src = url;
  });
}

/** All figures of the view side by side (compare) or one under the other, at twice the screen size. */
export async function viewPng(svgs: SVGSVGElement[], background: string): Promise<ArrayBuffer> {
  if (svgs.length === 0) throw new Error('this view has no figure to save');
  const parts = await Promise.all(svgs.map(loadSvg));
  const side = parts.length === 2;
  const W = side ? parts[0].w + parts[1].w : Math.max(...parts.map((p) => p.w));
  const H = side ? Math.max(...parts.map((p) => p.h)) : parts.reduce((a, p) => a + p.h, 0);
  const k = Math.min(2, MAX_SIDE / Math.max(W, H));
  const canvas = document.createElement('canvas');
  canvas.width = Math.round(W * k);
  canvas.height = Math.round(H * k);
  const ctx = canvas.getContext('2d');
  if (!ctx) throw new Error('no canvas available');
  ctx.fillStyle = background;
  ctx.fillRect(0, 0, canvas.width, canvas.height);
  let x = 0;
  let y = 0;
  for (const p of parts) {
    ctx.drawImage(p.img, x * k, y * k, p.w * k, p.h * k);
    if (side) x += p.w; else y += p.h;
  }
  const blob = await new Promise<Blob | null>((resolve) => canvas.toBlob(resolve, 'image/png'));
  if (!blob) throw new Error('the PNG could not be made');
  return blob.arrayBuffer();
}

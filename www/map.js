// The map canvas: shows the engine's RGBA image with pan and zoom, and reports which grid
// cell is under the pointer (or under the centre cross when the keyboard drives the map).

const MAX_CELL_PX = 64; // at most this many screen pixels per cell when zoomed in
const ZOOM_STEP = 1.5;

export class MapView {
  /**
   * @param {HTMLCanvasElement} canvas the visible map canvas
   * @param {(cell: {col: number, row: number} | null) => void} onCell called when the cell
   *   under the pointer (or the centre cross) changes; null when off the grid
   * @param {(cell: {col: number, row: number}) => void} [onSelect] called when a cell is
   *   clicked (without dragging) or chosen with Enter under the centre cross
   */
  constructor(canvas, onCell, onSelect = () => {}) {
    this.canvas = canvas;
    this.context = canvas.getContext('2d');
    this.onCell = onCell;
    this.onSelect = onSelect;
    this.selected = null;
    // The whole grid image at one pixel per cell. putImageData fills it once per render;
    // pan and zoom only redraw it scaled, so they never touch wasm memory.
    this.image = document.createElement('canvas');
    this.imageWidth = 0;
    this.imageHeight = 0;
    this.cellSizeM = null;
    // View transform: screen (CSS px) = offset + cell * scale.
    this.scale = 1;
    this.offsetX = 0;
    this.offsetY = 0;
    this.cssWidth = 0;
    this.cssHeight = 0;
    this.keyboardCross = false;
    this.lastCellKey = '';
    this.drag = null;

    new ResizeObserver(() => this.resize()).observe(canvas);
    this.resize();
    this.attachPointer();
    this.attachKeyboard();
  }

  /** Copies a fresh RGBA image (a view into wasm memory) and fits it on first show. */
  setImage(imageData, cellSizeM, { keepView = false } = {}) {
    const sizeChanged = imageData.width !== this.imageWidth || imageData.height !== this.imageHeight;
    this.image.width = imageData.width;
    this.image.height = imageData.height;
    this.image.getContext('2d').putImageData(imageData, 0, 0);
    this.imageWidth = imageData.width;
    this.imageHeight = imageData.height;
    this.cellSizeM = cellSizeM;
    if (sizeChanged || !keepView) this.fit();
    else this.draw();
  }

  /** Outlines one cell (the one whose history is shown), or none. */
  setSelected(cell) {
    this.selected = cell;
    this.draw();
  }

  /** Something drawn over the map after the image (e.g. a zone outline): `draw(ctx, view)`
   *  in CSS pixels, with the view's `offsetX`, `offsetY` and `scale` (px per cell). */
  setOverlay(draw) {
    this.overlay = draw;
    this.draw();
  }

  hasImage() {
    return this.imageWidth > 0;
  }

  resize() {
    const rect = this.canvas.getBoundingClientRect();
    const ratio = window.devicePixelRatio || 1;
    const hadSize = this.cssWidth > 0;
    // Keep the same grid point at the centre when the frame changes size.
    const centre = hadSize ? this.screenToCell(this.cssWidth / 2, this.cssHeight / 2) : null;
    this.cssWidth = rect.width;
    this.cssHeight = rect.height;
    this.canvas.width = Math.max(1, Math.round(rect.width * ratio));
    this.canvas.height = Math.max(1, Math.round(rect.height * ratio));
    if (centre && this.hasImage()) {
      this.offsetX = this.cssWidth / 2 - centre.x * this.scale;
      this.offsetY = this.cssHeight / 2 - centre.y * this.scale;
    } else if (this.hasImage()) {
      this.fit();
      return;
    }
    this.draw();
  }

  fitScale() {
    const margin = 16;
    return Math.min(
      (this.cssWidth - 2 * margin) / this.imageWidth,
      (this.cssHeight - 2 * margin) / this.imageHeight,
    );
  }

  fit() {
    if (!this.hasImage()) return;
    this.scale = Math.max(this.fitScale(), 1e-3);
    this.offsetX = (this.cssWidth - this.imageWidth * this.scale) / 2;
    this.offsetY = (this.cssHeight - this.imageHeight * this.scale) / 2;
    this.draw();
  }

  /** Zooms by `factor` keeping the grid point under (screenX, screenY) in place. */
  zoomAt(factor, screenX = this.cssWidth / 2, screenY = this.cssHeight / 2) {
    if (!this.hasImage()) return;
    const minScale = this.fitScale() / 4;
    const newScale = Math.min(MAX_CELL_PX, Math.max(minScale, this.scale * factor));
    const anchor = this.screenToCell(screenX, screenY);
    this.scale = newScale;
    this.offsetX = screenX - anchor.x * newScale;
    this.offsetY = screenY - anchor.y * newScale;
    this.draw();
  }

  panBy(dx, dy) {
    this.offsetX += dx;
    this.offsetY += dy;
    this.draw();
  }

  /** Grid coordinates (fractional cells from the top-left corner) of a screen point. */
  screenToCell(x, y) {
    return { x: (x - this.offsetX) / this.scale, y: (y - this.offsetY) / this.scale };
  }

  /** Page coordinates of a cell's centre: lets tests point at a known cell. */
  cellCentreOnPage(col, row) {
    const rect = this.canvas.getBoundingClientRect();
    return {
      x: rect.left + this.offsetX + (col + 0.5) * this.scale,
      y: rect.top + this.offsetY + (row + 0.5) * this.scale,
    };
  }

  cellAtScreen(x, y) {
    const point = this.screenToCell(x, y);
    const col = Math.floor(point.x);
    const row = Math.floor(point.y);
    if (col < 0 || row < 0 || col >= this.imageWidth || row >= this.imageHeight) return null;
    return { col, row };
  }

  reportCell(cell) {
    const key = cell ? `${cell.col},${cell.row}` : '';
    if (key === this.lastCellKey) return;
    this.lastCellKey = key;
    this.onCell(cell);
  }

  draw() {
    const ctx = this.context;
    const ratio = this.canvas.width / Math.max(this.cssWidth, 1);
    ctx.setTransform(1, 0, 0, 1, 0, 0);
    ctx.clearRect(0, 0, this.canvas.width, this.canvas.height);
    if (!this.hasImage()) return;
    ctx.setTransform(ratio, 0, 0, ratio, 0, 0);
    // Nearest-neighbour scaling: each cell stays a crisp square, so what the planner sees
    // is exactly the cell the readout describes.
    ctx.imageSmoothingEnabled = false;
    ctx.drawImage(
      this.image,
      this.offsetX, this.offsetY,
      this.imageWidth * this.scale, this.imageHeight * this.scale,
    );
    ctx.strokeStyle = 'rgba(29, 42, 48, 0.55)';
    ctx.lineWidth = 1;
    ctx.strokeRect(
      Math.round(this.offsetX) - 0.5, Math.round(this.offsetY) - 0.5,
      Math.round(this.imageWidth * this.scale) + 1, Math.round(this.imageHeight * this.scale) + 1,
    );
    if (this.overlay) this.overlay(ctx, this);
    if (this.selected) this.drawSelection(ctx);
    this.drawScaleBar(ctx);
    if (this.keyboardCross) {
      this.drawCross(ctx);
      this.reportCell(this.cellAtScreen(this.cssWidth / 2, this.cssHeight / 2));
    }
  }

  drawCross(ctx) {
    const x = Math.round(this.cssWidth / 2) + 0.5;
    const y = Math.round(this.cssHeight / 2) + 0.5;
    for (const [colour, width] of [['rgba(255,255,255,0.9)', 3], ['#1d2a30', 1]]) {
      ctx.strokeStyle = colour;
      ctx.lineWidth = width;
      ctx.beginPath();
      ctx.moveTo(x - 10, y); ctx.lineTo(x + 10, y);
      ctx.moveTo(x, y - 10); ctx.lineTo(x, y + 10);
      ctx.stroke();
    }
  }

  /** A dark-and-light square around the selected cell, at least 9 px so it shows zoomed out. */
  drawSelection(ctx) {
    const size = Math.max(9, this.scale);
    const x = this.offsetX + (this.selected.col + 0.5) * this.scale - size / 2;
    const y = this.offsetY + (this.selected.row + 0.5) * this.scale - size / 2;
    for (const [colour, width] of [['rgba(255,255,255,0.95)', 3], ['#b0521d', 1.5]]) {
      ctx.strokeStyle = colour;
      ctx.lineWidth = width;
      ctx.strokeRect(x, y, size, size);
    }
  }

  /** A scale bar with a round length of about a sixth of the map width. */
  drawScaleBar(ctx) {
    if (!this.cellSizeM) return;
    const metresPerPx = this.cellSizeM / this.scale;
    const target = metresPerPx * this.cssWidth / 6;
    const power = 10 ** Math.floor(Math.log10(target));
    const lengthM = [5, 2, 1].map((m) => m * power).find((m) => m <= target) ?? power;
    const lengthPx = lengthM / metresPerPx;
    const label = lengthM >= 1000 ? `${lengthM / 1000} km` : `${lengthM} m`;
    const x = 14;
    const y = this.cssHeight - 16;
    ctx.fillStyle = 'rgba(255, 255, 255, 0.85)';
    ctx.fillRect(x - 6, y - 22, lengthPx + 12, 30);
    ctx.fillStyle = '#1d2a30';
    ctx.fillRect(x, y - 3, lengthPx, 4);
    ctx.fillRect(x, y - 8, 1.5, 9);
    ctx.fillRect(x + lengthPx - 1.5, y - 8, 1.5, 9);
    ctx.font = '12px system-ui, sans-serif';
    ctx.textBaseline = 'bottom';
    ctx.fillText(label, x, y - 7);
  }

  attachPointer() {
    const canvas = this.canvas;
    const local = (event) => {
      const rect = canvas.getBoundingClientRect();
      return { x: event.clientX - rect.left, y: event.clientY - rect.top };
    };
    canvas.addEventListener('pointerdown', (event) => {
      if (event.button !== 0) return;
      canvas.setPointerCapture(event.pointerId);
      const point = local(event);
      this.drag = { ...point, id: event.pointerId, startX: point.x, startY: point.y };
      canvas.classList.add('dragging');
    });
    canvas.addEventListener('pointermove', (event) => {
      const point = local(event);
      if (this.drag && this.drag.id === event.pointerId) {
        this.panBy(point.x - this.drag.x, point.y - this.drag.y);
        this.drag.x = point.x;
        this.drag.y = point.y;
      }
      // The pointer takes over from the keyboard cross as soon as it moves over the map.
      if (this.keyboardCross) {
        this.keyboardCross = false;
        this.draw();
      }
      this.reportCell(this.cellAtScreen(point.x, point.y));
    });
    const endDrag = (event) => {
      if (this.drag && this.drag.id === event.pointerId) {
        this.drag = null;
        canvas.classList.remove('dragging');
      }
    };
    canvas.addEventListener('pointerup', (event) => {
      const drag = this.drag;
      endDrag(event);
      if (!drag || drag.id !== event.pointerId) return;
      // A press that barely moved is a click on a cell, not a pan.
      const point = local(event);
      if (Math.hypot(point.x - drag.startX, point.y - drag.startY) > 4) return;
      const cell = this.cellAtScreen(point.x, point.y);
      if (cell) this.onSelect(cell);
    });
    canvas.addEventListener('pointercancel', endDrag);
    canvas.addEventListener('pointerleave', () => {
      if (!this.keyboardCross) this.reportCell(null);
    });
    canvas.addEventListener('wheel', (event) => {
      event.preventDefault();
      const point = local(event);
      // Smooth for trackpads (small deltas), one ZOOM_STEP-ish per mouse-wheel notch.
      const factor = Math.exp(-event.deltaY * 0.0025);
      this.zoomAt(factor, point.x, point.y);
      this.reportCell(this.cellAtScreen(point.x, point.y));
    }, { passive: false });
  }

  attachKeyboard() {
    this.canvas.addEventListener('keydown', (event) => {
      const step = event.shiftKey ? 200 : 50;
      const actions = {
        ArrowLeft: () => this.panBy(step, 0),
        ArrowRight: () => this.panBy(-step, 0),
        ArrowUp: () => this.panBy(0, step),
        ArrowDown: () => this.panBy(0, -step),
        '+': () => this.zoomIn(),
        '=': () => this.zoomIn(),
        '-': () => this.zoomOut(),
        '0': () => this.fit(),
        Enter: () => {
          const cell = this.cellAtScreen(this.cssWidth / 2, this.cssHeight / 2);
          if (cell) this.onSelect(cell);
        },
      };
      const action = actions[event.key];
      if (!action || !this.hasImage()) return;
      event.preventDefault();
      this.keyboardCross = true;
      action();
    });
    this.canvas.addEventListener('blur', () => {
      if (!this.keyboardCross) return;
      this.keyboardCross = false;
      this.draw();
      this.reportCell(null);
    });
  }

  zoomIn() {
    this.zoomAt(ZOOM_STEP);
  }

  zoomOut() {
    this.zoomAt(1 / ZOOM_STEP);
  }
}

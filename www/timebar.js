// The time bar: a year slider with one-year steps and play/pause. It only reports the chosen
// year; drawing that year is the page's job (and costs one engine render).

const PLAY_INTERVAL_MS = 120; // about eight years a second: fast enough to watch a retreat

export class TimeBar {
  /** @param {(year: number) => void} onYear */
  constructor({ slider, back, forward, play, label }, onYear) {
    Object.assign(this, { slider, back, forward, play, label, onYear });
    this.timer = null;
    slider.addEventListener('input', () => this.show(Number(slider.value)));
    back.addEventListener('click', () => this.step(-1));
    forward.addEventListener('click', () => this.step(1));
    play.addEventListener('click', () => (this.timer ? this.pause() : this.start()));
  }

  /** Enables the bar over [first, last] and shows `year`. */
  setRange(first, last, year) {
    this.pause();
    this.slider.min = String(first);
    this.slider.max = String(last);
    for (const control of [this.slider, this.back, this.forward, this.play]) control.disabled = false;
    this.show(year);
  }

  /** Back to the state before any run: no years, controls off. */
  reset() {
    this.pause();
    this.slider.min = this.slider.max = this.slider.value = '0';
    for (const control of [this.slider, this.back, this.forward, this.play]) control.disabled = true;
    this.label.textContent = '–';
    this.slider.removeAttribute('aria-valuetext');
  }

  year() {
    return Number(this.slider.value);
  }

  show(year) {
    const clamped = Math.min(Number(this.slider.max), Math.max(Number(this.slider.min), year));
    this.slider.value = String(clamped);
    this.label.textContent = String(clamped);
    this.slider.setAttribute('aria-valuetext', `year ${clamped}`);
    this.onYear(clamped);
  }

  step(delta) {
    this.pause();
    this.show(this.year() + delta);
  }

  start() {
    // Playing from the end starts again at the beginning.
    if (this.year() >= Number(this.slider.max)) this.show(Number(this.slider.min));
    this.play.setAttribute('aria-pressed', 'true');
    this.play.textContent = '❚❚';
    this.play.setAttribute('aria-label', 'Pause');
    this.timer = setInterval(() => {
      if (this.year() >= Number(this.slider.max)) this.pause();
      else this.show(this.year() + 1);
    }, PLAY_INTERVAL_MS);
  }

  pause() {
    if (!this.timer) return;
    clearInterval(this.timer);
    this.timer = null;
    this.play.setAttribute('aria-pressed', 'false');
    this.play.textContent = '▶';
    this.play.setAttribute('aria-label', 'Play through the years');
  }
}

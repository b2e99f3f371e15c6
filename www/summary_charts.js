// The run's charts over all its years: ice area, ice volume and the ice-free area per
// succession stage, each marking the year on the map.

import { LineChart, MultiChart } from './charts.js';
import { element } from './page_text.js';

const rgbCss = ([r, g, b]) => `rgb(${r} ${g} ${b})`;

export class SummaryCharts {
  constructor() {
    this.area = new LineChart(element('chart-area'), { title: 'Ice area', unit: 'km²', colour: '#2f6db0', decimals: 2 });
    this.volume = new LineChart(element('chart-volume'), { title: 'Ice volume', unit: 'km³', colour: '#1b306c', decimals: 3 });
    this.stages = new MultiChart(element('chart-stages'), { title: 'Ice-free area by stage', unit: 'km²', stacked: true, decimals: 1 });
  }

  /** @param {object[]} summary the run's rows @param {object[]} stageClasses none without plants */
  show(summary, stageClasses) {
    const years = summary.map((row) => row.year);
    this.area.setData(years, summary.map((row) => row.ice_area_km2));
    this.volume.setData(years, summary.map((row) => row.ice_volume_km3));
    // Stages 1-6 (ice-free ground), stacked from bare ground up.
    this.stages.setData(years, stageClasses.length ? stageClasses.slice(1).map((c, k) => ({
      label: c.label, colour: rgbCss(c.rgb),
      values: summary.map((row) => row.vegetation.stage_area_km2[k + 1]),
    })) : []);
  }

  clear() {
    this.area.setData([], []);
    this.volume.setData([], []);
    this.stages.setData([], []);
  }

  setMarker(year) {
    this.area.setMarker(year);
    this.volume.setMarker(year);
    this.stages.setMarker(year);
  }
}

/* soakline comparison chart: one part's core and surface, original (solid) against rerun (dashed).
   The two traces have their own time grids; uPlot.join aligns them, gaps are bridged. The legend says
   which line is dashed, in words and in its markers. */
(function () {
  "use strict";
  var holder = document.getElementById("overlay");
  var source = document.getElementById("overlay-data");
  if (!holder || !source || typeof uPlot === "undefined") { return; }
  var payload = JSON.parse(source.textContent);
  var data = uPlot.join(payload.tables);
  var styles = [
    { stroke: "#1f4e9c" }, { stroke: "#c2571a" },
    { stroke: "#1f4e9c", dash: [7, 5] }, { stroke: "#c2571a", dash: [7, 5] }
  ];
  var series = [{ label: "time (min)" }];
  payload.labels.forEach(function (label, i) {
    var line = styles[i].dash ? "dashed" : "solid";
    series.push({ label: label + " (" + payload.temp_unit + "), " + line, stroke: styles[i].stroke,
                  dash: styles[i].dash,
                  width: 2, spanGaps: true,
                  value: function (u, v) { return v == null ? "–" : v.toFixed(1); } });
  });
  function size() {
    var w = Math.max(280, holder.clientWidth);
    return { width: w, height: Math.round(Math.min(400, Math.max(240, w * 0.45))) };
  }
  var dims = size();
  var plot = new uPlot({
    width: dims.width, height: dims.height, scales: { x: { time: false } }, series: series,
    axes: [{ label: "time (min)" }, { label: "temperature (" + payload.temp_unit + ")" }],
    legend: { markers: { dash: function (u, i) { return u.series[i].dash ? "dashed" : "solid"; } } },
    cursor: { drag: { x: true, y: false } }
  }, data, holder);
  window.addEventListener("resize", function () { plot.setSize(size()); });
  window.soaklineOverlay = { plot: plot, payload: payload };
})();

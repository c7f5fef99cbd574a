/* soakline profile charts: each thermocouple's readings (points) and the fitted model (line) in one chart,
   the residuals (points, model minus reading) in a second chart below on the same time axis. Every
   series has its own times; uPlot.join aligns them. Data come from the page, in display units. */
(function () {
  "use strict";
  var source = document.getElementById("profile-data");
  var top = document.getElementById("profile-chart");
  var below = document.getElementById("residual-chart");
  if (!source || !top || !below || typeof uPlot === "undefined") { return; }
  var payload = JSON.parse(source.textContent);
  var colours = ["#1f4e9c", "#c2571a", "#1b7a5a", "#7a3f9d", "#8a6d00", "#b0306a", "#2f7f9e", "#555555"];
  function fmt(u, v) { return v == null ? "–" : v.toFixed(1); }
  function size(holder, share) {
    var w = Math.max(280, holder.clientWidth);
    return { width: w, height: Math.round(Math.min(420, Math.max(200, w * share))) };
  }
  function line(label, colour) {
    return { label: label, stroke: colour, width: 2, spanGaps: true, value: fmt, points: { show: false } };
  }
  function dots(label, colour) {
    return { label: label, stroke: colour, width: 0, value: fmt, paths: function () { return null; },
             points: { show: true, size: 5, stroke: colour, fill: colour } };
  }
  var sync = uPlot.sync("profile");
  var cursor = { drag: { x: true, y: false }, sync: { key: sync.key } };

  var series = [{ label: "time (min)" }];
  payload.labels.forEach(function (name, i) {
    var c = colours[i % colours.length];
    series.push(line(name + " fitted (" + payload.temp_unit + ")", c));
    series.push(dots(name + " reading (" + payload.temp_unit + ")", c));
  });
  var dims = size(top, 0.5);
  var plot = new uPlot({
    width: dims.width, height: dims.height, scales: { x: { time: false } }, series: series, cursor: cursor,
    axes: [{ label: "time (min)" }, { label: "temperature (" + payload.temp_unit + ")" }]
  }, uPlot.join(payload.curves), top);

  var rseries = [{ label: "time (min)" }];
  payload.labels.forEach(function (name, i) {
    rseries.push(dots(name + " residual (" + payload.delta_unit + ")", colours[i % colours.length]));
  });
  var zero = function (u) {
    var ctx = u.ctx, y = u.valToPos(0, "y", true);
    ctx.save(); ctx.strokeStyle = "#444"; ctx.lineWidth = window.devicePixelRatio || 1;
    ctx.beginPath(); ctx.moveTo(u.bbox.left, y); ctx.lineTo(u.bbox.left + u.bbox.width, y); ctx.stroke();
    ctx.restore();
  };
  var rdims = size(below, 0.25);
  var xs = plot.data[0], span = [xs[0], xs[xs.length - 1]];  // the same time axis as the chart above
  var residual = new uPlot({
    width: rdims.width, height: rdims.height, series: rseries, cursor: cursor,
    scales: { x: { time: false } },
    axes: [{ label: "time (min)" }, { label: "residual (" + payload.delta_unit + ")" }],
    hooks: { draw: [zero] }
  }, uPlot.join(payload.residuals), below);
  residual.setScale("x", { min: span[0], max: span[1] });
  window.addEventListener("resize", function () {
    plot.setSize(size(top, 0.5));
    residual.setSize(size(below, 0.25));
  });
  window.soaklineProfile = { plot: plot, residual: residual, payload: payload };
})();

/* soakline part chart: temperatures against time with step boundaries, targets and missed spans.
   Data come from the page (a JSON script per chart, already in display units); uPlot is vendored. */
(function () {
  "use strict";
  if (typeof uPlot === "undefined") { return; }
  var palette = { core: "#1f4e9c", surface: "#c2571a", corner: "#7a3f9d", ambient: "#6b6b6b" };

  function draw(holder, payload) {
    function xpos(u, v) { return u.valToPos(v, "x", true); }
    function ypos(u, v) { return u.valToPos(v, "y", true); }

    function drawSpans(u) {
      var ctx = u.ctx, top = u.bbox.top, h = u.bbox.height;
      ctx.save();
      ctx.fillStyle = "rgba(214, 40, 40, 0.13)";
      payload.spans.forEach(function (s) {
        var a = xpos(u, s.start_min), b = xpos(u, s.end_min);
        ctx.fillRect(Math.min(a, b), top, Math.max(2, Math.abs(b - a)), h);
      });
      ctx.restore();
    }

    function drawMarks(u) {
      var ctx = u.ctx, top = u.bbox.top, bottom = u.bbox.top + u.bbox.height;
      var ratio = window.devicePixelRatio || 1;
      ctx.save();
      ctx.font = (11 * ratio) + "px sans-serif";
      ctx.textAlign = "left";  // uPlot leaves the axis labels' alignment on the context
      ctx.textBaseline = "alphabetic";
      ctx.setLineDash([4 * ratio, 4 * ratio]);
      ctx.strokeStyle = "#444";
      ctx.fillStyle = "#333";
      ctx.lineWidth = ratio;
      payload.steps.forEach(function (s, i) {
        var x = xpos(u, s.start_min);
        if (i > 0) { ctx.beginPath(); ctx.moveTo(x, top); ctx.lineTo(x, bottom); ctx.stroke(); }
        ctx.fillText(s.name, x + 4 * ratio, top + 12 * ratio);
      });
      ctx.setLineDash([]);
      payload.thresholds.forEach(function (t) {
        var y = ypos(u, t.value), a = xpos(u, t.start_min), b = xpos(u, t.end_min);
        ctx.strokeStyle = t.flagged ? "#c81e1e" : "#2e7d32";
        ctx.lineWidth = 2 * ratio;
        ctx.beginPath(); ctx.moveTo(a, y); ctx.lineTo(b, y); ctx.stroke();
        ctx.fillStyle = ctx.strokeStyle;
        ctx.fillText(t.label + " " + Math.round(t.value) + payload.temp_unit, a + 4 * ratio, y - 4 * ratio);
      });
      ctx.restore();
    }

    function size() {
      var w = Math.max(280, holder.clientWidth);
      return { width: w, height: Math.round(Math.min(420, Math.max(240, w * 0.5))) };
    }

    var series = [{ label: "time (min)", value: function (u, v) { return v == null ? "–" : v.toFixed(1); } }];
    payload.series.forEach(function (name) {
      series.push({
        label: name + " (" + payload.temp_unit + ")",
        stroke: palette[name] || "#000",
        width: name === "ambient" ? 1.5 : 2,
        dash: name === "ambient" ? [6, 4] : undefined,
        value: function (u, v) { return v == null ? "–" : v.toFixed(1); }
      });
    });
    var dims = size();
    var plot = new uPlot({
      width: dims.width,
      height: dims.height,
      scales: { x: { time: false } },
      series: series,
      axes: [
        { label: "time (min)", stroke: "#222" },
        { label: "temperature (" + payload.temp_unit + ")", stroke: "#222" }
      ],
      cursor: { drag: { x: true, y: false } },
      hooks: { drawAxes: [drawSpans], draw: [drawMarks] }
    }, payload.data, holder);
    window.addEventListener("resize", function () { plot.setSize(size()); });
    return { plot: plot, payload: payload };
  }

  // Every element with data-chart="ID" gets a chart of the JSON in script#ID.
  var charts = [];
  document.querySelectorAll("[data-chart]").forEach(function (holder) {
    var source = document.getElementById(holder.getAttribute("data-chart"));
    if (source) { charts.push(draw(holder, JSON.parse(source.textContent))); }
  });
  window.soaklineCharts = charts;
  window.soaklineChart = charts[0];
})();

/* soakline part chart: temperatures against time with step boundaries, targets and missed spans.
   Data come from the page (a JSON script per chart, already in display units); uPlot is vendored.
   A row of buttons above each chart zooms to one step (a quench is a sliver of a day's schedule);
   target labels sit on a white ground beside their line and never on top of one another. */
(function () {
  "use strict";
  if (typeof uPlot === "undefined") { return; }
  var palette = { core: "#1f4e9c", surface: "#c2571a", corner: "#7a3f9d", underside: "#1b7a5a",
                  ambient: "#6b6b6b" };

  function overlaps(a, b) {
    return a.x < b.x + b.w && b.x < a.x + a.w && a.y < b.y + b.h && b.y < a.y + a.h;
  }

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
      var ctx = u.ctx, left = u.bbox.left, right = u.bbox.left + u.bbox.width;
      var top = u.bbox.top, bottom = u.bbox.top + u.bbox.height;
      var ratio = window.devicePixelRatio || 1, pad = 3 * ratio, lineH = 14 * ratio;
      var placed = [];
      ctx.save();
      ctx.beginPath(); ctx.rect(left, top, right - left, bottom - top); ctx.clip();
      ctx.font = (11 * ratio) + "px sans-serif";
      ctx.textAlign = "left";  // uPlot leaves the axis labels' alignment on the context
      ctx.textBaseline = "middle";

      function label(text, x, y, colour, below) {
        // a white ground under the text, moved off the line and off every label already drawn
        var w = ctx.measureText(text).width + 2 * pad, box = { x: x, y: y - lineH - pad, w: w, h: lineH };
        if (below) { box.y = y + pad; }
        box.x = Math.max(left + pad, Math.min(box.x, right - w - pad));
        for (var tries = 0; tries < 12 && placed.some(function (p) { return overlaps(p, box); }); tries++) {
          box.y += (below ? 1 : -1) * (lineH + 1);
        }
        box.y = Math.max(top, Math.min(box.y, bottom - lineH));
        placed.push(box);
        ctx.fillStyle = "rgba(255, 255, 255, 0.9)";
        ctx.fillRect(box.x, box.y, box.w, box.h);
        ctx.fillStyle = colour;
        ctx.fillText(text, box.x + pad, box.y + lineH / 2);
      }

      ctx.setLineDash([4 * ratio, 4 * ratio]);
      ctx.strokeStyle = "#444";
      ctx.lineWidth = ratio;
      payload.steps.forEach(function (s, i) {
        var x = xpos(u, s.start_min), end = xpos(u, s.end_min);
        if (Math.min(end, right) - Math.max(x, left) < 2 * ratio) { return; }
        if (i > 0) { ctx.beginPath(); ctx.moveTo(x, top); ctx.lineTo(x, bottom); ctx.stroke(); }
        label(s.name, Math.max(x, left) + pad, top + lineH + pad, "#333", false);
      });
      ctx.setLineDash([]);
      // lower targets first, so that each label can move up into free room
      payload.thresholds.slice().sort(function (a, b) { return a.value - b.value; }).forEach(function (t) {
        var y = ypos(u, t.value), a = xpos(u, t.start_min), b = xpos(u, t.end_min);
        if (Math.min(b, right) - Math.max(a, left) < 2 * ratio || y < top || y > bottom) { return; }
        var colour = t.flagged ? "#c81e1e" : "#2e7d32";
        ctx.strokeStyle = colour;
        ctx.lineWidth = 2 * ratio;
        ctx.beginPath(); ctx.moveTo(a, y); ctx.lineTo(b, y); ctx.stroke();
        label(t.label + " " + Math.round(t.value) + payload.temp_unit, Math.max(a, left) + pad, y, colour,
              y - lineH - pad < top + 2 * lineH);
      });
      ctx.restore();
      u.soaklineLabels = placed.map(function (p) { return { x: p.x, y: p.y, w: p.w, h: p.h }; });
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
      legend: { markers: { dash: function (u, i) { return u.series[i].dash ? "dashed" : "solid"; } } },
      cursor: { drag: { x: true, y: false } },
      hooks: { drawAxes: [drawSpans], draw: [drawMarks] }
    }, payload.data, holder);
    window.addEventListener("resize", function () { plot.setSize(size()); });

    // One click zooms to a step; the y axis follows the temperatures inside it.
    var bar = document.createElement("div");
    bar.className = "chart-steps noprint";
    bar.setAttribute("role", "group");
    bar.setAttribute("aria-label", "Show on the chart");
    var times = payload.data[0], first = times[0], last = times[times.length - 1];
    var buttons = [];
    function zoom(button, min, max) {
      plot.setScale("x", { min: min, max: max });
      buttons.forEach(function (b) { b.setAttribute("aria-pressed", b === button ? "true" : "false"); });
    }
    function add(text, min, max) {
      var b = document.createElement("button");
      b.type = "button";
      b.textContent = text;
      b.setAttribute("aria-pressed", "false");
      b.addEventListener("click", function () { zoom(b, min, max); });
      buttons.push(b);
      bar.appendChild(b);
      return b;
    }
    add("whole schedule", first, last).setAttribute("aria-pressed", "true");
    payload.steps.forEach(function (s) { add(s.name, s.start_min, s.end_min); });
    holder.parentNode.insertBefore(bar, holder);
    return { plot: plot, payload: payload, zoom: function (name) {
      var i = payload.steps.findIndex(function (s) { return s.name === name; });
      buttons[i + 1].click();
    } };
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

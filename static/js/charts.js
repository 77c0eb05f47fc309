// Draws every plotly figure embedded as JSON by the {% chart %} tag.
(function () {
  function draw() {
    if (!window.Plotly) return;
    document.querySelectorAll(".fc-chart[data-figure]").forEach(function (el) {
      var source = document.getElementById(el.dataset.figure);
      if (!source || el.dataset.drawn) return;
      var fig = JSON.parse(source.textContent);
      window.Plotly.newPlot(el, fig.data, fig.layout, { displaylogo: false, responsive: true });
      el.dataset.drawn = "1";
    });
  }
  if (document.readyState === "loading") document.addEventListener("DOMContentLoaded", draw);
  else draw();
})();

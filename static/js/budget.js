// Clicking a quarter's bar on the budget chart opens that quarter's batteries, like its "Show batteries" link.
(function () {
  function hook() {
    var wrap = document.getElementById("budget-chart");
    var chart = wrap && wrap.querySelector(".fc-chart");
    if (!chart || typeof chart.on !== "function") return;
    chart.on("plotly_click", function (event) {
      if (!event.points || !event.points.length) return;
      window.location.href = wrap.dataset.drill + encodeURIComponent(event.points[0].x) + "#drill";
    });
  }
  if (document.readyState === "loading") document.addEventListener("DOMContentLoaded", hook);
  else hook();
})();

// Follows a CSV import on its page: asks the server how far the worker has got, once a second, and
// reloads the page (which then shows the result) when the import has finished.
(function () {
  "use strict";
  var box = document.getElementById("import-progress");
  if (!box) return;
  var url = box.getAttribute("data-url");
  var bar = document.getElementById("import-bar");
  var meter = bar.parentElement;
  function show(id, value) {
    document.getElementById(id).textContent = (value || 0).toLocaleString();
  }
  function poll() {
    fetch(url, {credentials: "same-origin", headers: {"Accept": "application/json"}})
      .then(function (response) { return response.ok ? response.json() : null; })
      .then(function (data) {
        if (!data) { window.setTimeout(poll, 3000); return; }
        if (data.finished) { window.location.reload(); return; }
        if (data.state === "running") {
          document.getElementById("import-state").textContent = "Importing…";
        }
        var percent = data.percent || 0;
        bar.style.width = percent + "%";
        meter.setAttribute("aria-valuenow", String(percent));
        show("import-rows", data.rows_checked);
        show("import-inspections", data.inspections);
        show("import-already", data.already_stored);
        show("import-problems", data.problems);
        window.setTimeout(poll, 1000);
      })
      .catch(function () { window.setTimeout(poll, 3000); });
  }
  poll();
})();

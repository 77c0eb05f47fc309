// Tray grid entry: move to the next cell once a reading is complete; Enter moves on instead of submitting.
// As the crew types, each box is judged by the shared rules (rules.js, limits from the server): text that
// cannot be a reading is marked on the box where it was typed, and a cell unlike the rest of the tray
// is marked with its own "Yes, it reads this" box to tick (a real weak cell) or a value to fix (a slip).
(function () {
  var form = document.getElementById("inspection-form");
  if (!form) return;
  var rules = window.FleetCareRules;
  var limits = rules && rules.limitsOf();
  var boxes = Array.prototype.slice.call(form.querySelectorAll("input[data-position]"));
  var save = document.getElementById("save-inspection");
  var touched = false;
  // A task's link names the situation; offline, the kept page is the plain one, so the address decides.
  var wanted = new URLSearchParams(location.search).get("situation");
  var situation = form.elements.situation;
  if (wanted && situation && situation.querySelector("option[value='" + wanted.replace(/[^a-z_]/g, "") + "']") &&
      !form.querySelector(".is-invalid, .has-error")) situation.value = wanted;

  function complete(value) {
    // "265" is 1.265; a value starting with 1 waits for four digits ("1150") because "115" could go on.
    if (/^[2-9]\d\d$/.test(value)) return true;
    if (/^1\d\d\d$/.test(value)) return true;
    if (/^1\.\d\d\d$/.test(value)) return true;
    return false;
  }

  function unfinished(value) {
    // The start of a reading still being typed: not yet an error.
    return /^(1\d{0,2}|1[.,]\d{0,2}|[2-9]\d?|[.,]\d{0,2})?$/.test(value);
  }

  function next(box) {
    var i = boxes.indexOf(box);
    var target = boxes[i + 1] || save;
    target.focus();
    if (target.select) target.select();
  }

  function cellOf(box) { return box.closest(".tray-cell"); }

  function mark(box, messages, suspect) {
    var cell = cellOf(box);
    var holder = cell.querySelector(".fc-cell-messages");
    holder.textContent = "";
    messages.forEach(function (m) {
      var line = document.createElement("div");
      line.className = "invalid-feedback d-block";
      line.textContent = m;
      holder.appendChild(line);
    });
    var toggle = cell.querySelector(".confirm-toggle");
    var confirmed = toggle && toggle.querySelector("input").checked;
    cell.classList.toggle("is-suspect", !!suspect);
    cell.classList.toggle("has-error", messages.length > 0 && !(suspect && confirmed));
    box.classList.toggle("is-invalid", messages.length > 0 && !(suspect && confirmed));
    if (toggle) toggle.hidden = !suspect;
  }

  // Judge every box again: a slip in one cell changes the median the others are read against.
  function judge() {
    if (!limits || limits.readsByBlock) return;
    var values = {};
    var problems = {};
    boxes.forEach(function (box) {
      var text = box.value.trim();
      if (!text) return;
      if (unfinished(text) && document.activeElement === box && !complete(text)) return;
      var parsed = rules.parseSg(text, limits);
      if (parsed.error) problems[box.dataset.position] = parsed.error;
      else values[box.dataset.position] = parsed.value;
    });
    var found = rules.suspects(values, limits);
    boxes.forEach(function (box) {
      var p = box.dataset.position;
      if (problems[p]) mark(box, [problems[p]], false);
      else if (found[p]) mark(box, [found[p]], true);
      else mark(box, [], false);
    });
  }

  boxes.forEach(function (box) {
    box.addEventListener("input", function () {
      touched = true;
      cellOf(box).classList.toggle("is-filled", box.value.trim() !== "");
      var confirm = form.elements["confirm_" + box.dataset.position];
      if (confirm) confirm.checked = false;  // a confirmation is for the value it was given to
      var text = box.value.trim();
      var ok = !limits || !rules.parseSg(text, limits).error;
      if (box.dataset.autoadvance === "sg" && complete(text) && ok) next(box);
      judge();
    });
    box.addEventListener("blur", function () { if (touched) judge(); });
    box.addEventListener("keydown", function (event) {
      if (event.key === "Enter") { event.preventDefault(); next(box); }
    });
  });
  form.querySelectorAll("input[data-confirm]").forEach(function (confirm) {
    confirm.addEventListener("change", judge);
  });
  var header = form.querySelectorAll("input[name=temp], input[name=hours_since_charge]");
  header.forEach(function (input) {
    input.addEventListener("keydown", function (event) {
      if (event.key === "Enter" && boxes.length) { event.preventDefault(); boxes[0].focus(); }
    });
  });
})();

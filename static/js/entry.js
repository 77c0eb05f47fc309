// Tray grid entry: move to the next cell once a reading is complete; Enter moves on instead of submitting.
(function () {
  var form = document.getElementById("inspection-form");
  if (!form) return;
  var boxes = Array.prototype.slice.call(form.querySelectorAll("input[data-position]"));
  var save = document.getElementById("save-inspection");

  function complete(value) {
    // "265" is 1.265; a value starting with 1 waits for four digits ("1150") because "115" could go on.
    if (/^[2-9]\d\d$/.test(value)) return true;
    if (/^1\d\d\d$/.test(value)) return true;
    if (/^1\.\d\d\d$/.test(value)) return true;
    return false;
  }

  function next(box) {
    var i = boxes.indexOf(box);
    var target = boxes[i + 1] || save;
    target.focus();
    if (target.select) target.select();
  }

  boxes.forEach(function (box) {
    box.addEventListener("input", function () {
      box.closest(".tray-cell").classList.toggle("is-filled", box.value.trim() !== "");
      if (box.dataset.autoadvance === "sg" && complete(box.value.trim())) next(box);
    });
    box.addEventListener("keydown", function (event) {
      if (event.key === "Enter") { event.preventDefault(); next(box); }
    });
  });
  var header = form.querySelectorAll("input[name=temp], input[name=hours_since_charge]");
  header.forEach(function (input) {
    input.addEventListener("keydown", function (event) {
      if (event.key === "Enter" && boxes.length) { event.preventDefault(); boxes[0].focus(); }
    });
  });
})();

// The reading rules on the tablet. Every number comes from the page's "fc-limits" JSON, which the server
// builds from fleetcare/readings/validation.py: the same rules, the same limits, no copy here.
// Used by the entry screens as the crew types, and before anything is kept in the outbox.
(function () {
  "use strict";

  function limitsOf(doc) {
    var node = (doc || document).getElementById("fc-limits");
    return node ? JSON.parse(node.textContent) : null;
  }

  function round3(x) { return Math.round(x * 1000) / 1000; }

  // As chemistry.parse_sg: "1.265", "1,265", "1265" and the points "265" are all 1.265.
  function parseSg(text, limits) {
    var cleaned = String(text).trim().replace(",", ".");
    var value;
    if (!cleaned) return {error: "Enter a specific gravity, for example 1.265 or 265."};
    if (/^(\d+\.\d*|\.\d+)$/.test(cleaned)) value = parseFloat(cleaned);
    else if (!/^\d+$/.test(cleaned)) return {error: "'" + text + "' is not a number. Enter a specific gravity such as 1.265 or 265."};
    else if (cleaned.length === 3) value = (1000 + parseInt(cleaned, 10)) / 1000;
    else if (cleaned.length === 4) value = parseInt(cleaned, 10) / 1000;
    else return {error: "'" + text + "' is ambiguous. Enter the full reading (1.265) or three points (265)."};
    value = round3(value);
    if (value < limits.sgLow || value > limits.sgHigh) {
      return {error: value.toFixed(3) + " is outside " + limits.sgLow.toFixed(3) + "–" + limits.sgHigh.toFixed(3) +
                     ". Check the hydrometer reading."};
    }
    return {value: value};
  }

  function median(values) {
    var v = values.slice().sort(function (a, b) { return a - b; });
    var mid = Math.floor(v.length / 2);
    return v.length % 2 ? v[mid] : (v[mid - 1] + v[mid]) / 2;
  }

  function inBand(value, limits) {
    return (limits.bandLow === null || value >= limits.bandLow - 1e-9) &&
           (limits.bandHigh === null || value <= limits.bandHigh + 1e-9);
  }

  // As validation.suspect_cells: {position: why}.
  function suspects(values, limits) {
    var found = {};
    var positions = Object.keys(values).map(Number);
    positions.forEach(function (p) {
      var sg = values[p];
      var others = positions.filter(function (q) { return q !== p; }).map(function (q) { return values[q]; });
      var middle = others.length ? round3(median(others)) : null;
      if (others.length >= limits.slipMinOthers) {
        if (round3(sg - middle) > limits.slipAbove) {
          found[p] = sg.toFixed(3) + " is " + (sg - middle).toFixed(3) + " above the other cells (median " +
                     middle.toFixed(3) + "). A slip? Fix it, or confirm it.";
          return;
        }
        if (round3(middle - sg) > limits.slipBelow) {
          found[p] = sg.toFixed(3) + " is " + (middle - sg).toFixed(3) + " below the other cells (median " +
                     middle.toFixed(3) + "). Fix a slip, or confirm a weak cell.";
          return;
        }
      }
      if (inBand(sg, limits) || (middle !== null && !inBand(middle, limits))) return;
      if (limits.bandHigh !== null && sg > limits.bandHigh) {
        found[p] = sg.toFixed(3) + " is above what this battery reads when full (over " + limits.bandHigh.toFixed(3) +
                   "). Fix it, or confirm it is what the hydrometer shows.";
      } else {
        found[p] = sg.toFixed(3) + " is below what this battery reads when flat (under " + limits.bandLow.toFixed(3) +
                   "). Fix it, or confirm it is what the hydrometer shows.";
      }
    });
    return found;
  }

  function trayProblem(values, limits, serial) {
    var list = Object.keys(values).map(function (p) { return values[p]; });
    if (list.length <= limits.slipMinOthers || limits.bandHigh === null) return null;
    var middle = round3(median(list));
    if (middle <= limits.bandHigh) return null;
    return "The cells read about " + middle.toFixed(3) + ", more than " + (serial || "this battery") +
           " reads even when full (up to " + limits.bandHigh.toFixed(3) + "): these look like another battery's " +
           "readings. Check the serial on the tray, and the hydrometer.";
  }

  function tempProblem(text, limits) {
    var cleaned = String(text || "").trim().replace(",", ".");
    if (!cleaned) return null;
    if (!/^-?\d+(\.\d)?$/.test(cleaned)) return "Enter a number.";
    var value = parseFloat(cleaned);
    var c = limits.fahrenheit ? (value - 32) * 5 / 9 : value;
    c = Math.round(c * 10) / 10;
    if (c >= limits.tempLowC && c <= limits.tempHighC) return null;
    var word = limits.readsByBlock ? "Block temperature" : "Electrolyte temperature";
    return word + (limits.fahrenheit ? " must be between −22 and 158 °F." : " must be between −30 and 70 °C.");
  }

  // As validation.date_problem; a typed time is the tablet's local time (the site's, on a site's tablet).
  function dateProblem(text, limits, label) {
    if (!text) return label + ": enter the date and time.";
    var when = new Date(text);
    if (isNaN(when.getTime())) return label + ": that date cannot be right. Check the date and the tablet's clock.";
    if (when.getTime() > Date.now() + limits.futureMinutes * 60000) {
      return label + " is in the future (more than " + limits.futureMinutes + " minutes from now). " +
             "Check the date and the tablet's clock.";
    }
    if (when.getTime() < new Date(limits.earliest).getTime()) return label + " is " + limits.earliestReason + ". Check the date.";
    return null;
  }

  function voltsProblem(text, limits) {
    var cleaned = String(text || "").trim().replace(",", ".");
    if (!/^\d+(\.\d+)?$/.test(cleaned)) return "Enter a number.";
    var v = parseFloat(cleaned);
    if (v >= limits.voltsLow && v <= limits.voltsHigh) return null;
    return v + " V is not plausible for a " + limits.cellsPerBlock + "-cell block (" + limits.cellsPerBlock * 2 +
           " V nominal: expected " + limits.voltsLow.toFixed(2) + "–" + limits.voltsHigh.toFixed(2) + " V). " +
           "Check the meter, its leads and the decimal point.";
  }

  function add(errors, name, message) { (errors[name] = errors[name] || []).push(message); }

  function labelOf(form, name) {
    var input = form.elements[name];
    var label = input && input.id ? form.querySelector("label[for='" + input.id + "']") : null;
    return label ? label.textContent.replace(/\*/g, "").replace(/\s*\(.*\)\s*$/, "").trim() : name;
  }

  // The whole reading form, as InspectionForm.clean judges it: {field name: [messages]}.
  function checkInspection(form, limits) {
    var errors = {};
    var scope = (form.elements.scope && form.elements.scope.value) || "all";
    var when = form.elements.taken_at;
    if (when) { var d = dateProblem(when.value, limits, "Taken at"); if (d) add(errors, "taken_at", d); }
    var situation = form.elements.situation;
    if (situation && situation.value && limits.situations && limits.situations.indexOf(situation.value) < 0) {
      add(errors, "situation", situation.value === "equalized" ? limits.sealedNotEqualized
        : "Choose the situation the reading was taken in.");
    }
    var t = form.elements.temp ? tempProblem(form.elements.temp.value, limits) : null;
    if (t) add(errors, "temp", t);
    var values = {};
    var filled = 0;
    form.querySelectorAll("input[data-position]").forEach(function (input) {
      var p = Number(input.dataset.position);
      var text = input.value.trim();
      if (!text) {
        if (scope === "all") add(errors, input.name, (limits.readsByBlock ? "Block " + p + " is empty: read every block."
          : "Cell " + p + " is empty: an all-cell reading needs all " + limits.positions + " cells."));
        return;
      }
      filled += 1;
      if (limits.readsByBlock) {
        var v = voltsProblem(text, limits);
        if (v) add(errors, input.name, v);
        return;
      }
      var parsed = parseSg(text, limits);
      if (parsed.error) add(errors, input.name, parsed.error);
      else values[p] = parsed.value;
    });
    if (!limits.readsByBlock) {
      if (filled && !errors.temp && form.elements.temp && !form.elements.temp.value.trim() &&
          !(form.elements.hydrometer_compensated && form.elements.hydrometer_compensated.checked)) {
        add(errors, "temp", "Enter the electrolyte temperature, or tick that your hydrometer corrects for it.");
      }
      var tray = trayProblem(values, limits, form.dataset.serial);
      if (tray) add(errors, "__all__", tray);
      else {
        var found = suspects(values, limits);
        Object.keys(found).forEach(function (p) {
          var confirm = form.elements["confirm_" + p];
          if (!(confirm && confirm.checked)) add(errors, "sg_" + p, found[p]);
        });
      }
    }
    return errors;
  }

  // Water and equalizing forms: their dates, temperatures, SG and amounts.
  function checkSimpleForm(form, limits) {
    var errors = {};
    ["taken_at", "done_at", "started_at", "ended_at"].forEach(function (name) {
      var input = form.elements[name];
      if (!input) return;
      var d = dateProblem(input.value, limits, labelOf(form, name));
      if (d) add(errors, name, d);
    });
    if (form.elements.temp && form.elements.temp.value.trim()) {
      var t = tempProblem(form.elements.temp.value, limits);
      if (t) add(errors, "temp", t);
    }
    if (form.elements.sg) {
      var parsed = parseSg(form.elements.sg.value, limits);
      if (parsed.error) add(errors, "sg", parsed.error);
    }
    if (form.elements.volume) {
      var text = form.elements.volume.value.trim().replace(",", ".");
      if (!/^\d+(\.\d+)?$/.test(text) || parseFloat(text) <= 0) add(errors, "volume", "Enter the amount of water added.");
    }
    return errors;
  }

  function el(tag, cls, text) {
    var node = document.createElement(tag);
    node.className = cls;
    node.textContent = text;
    return node;
  }

  function clearShown(form) {
    form.querySelectorAll(".fc-rule-error").forEach(function (node) { node.remove(); });
    form.querySelectorAll(".is-invalid").forEach(function (node) { node.classList.remove("is-invalid"); });
    form.querySelectorAll(".tray-cell.has-error").forEach(function (node) { node.classList.remove("has-error"); });
  }

  // Each message beside the box it belongs to; the rest at the top of the form.
  function show(form, errors) {
    clearShown(form);
    var general = el("div", "alert alert-danger fc-rule-error", "Nothing was saved. Fix the boxes marked in red and save again.");
    general.setAttribute("role", "alert");
    general.id = "fc-check-refused";
    var first = null;
    Object.keys(errors).forEach(function (name) {
      var input = form.elements[name];
      if (!input || !input.classList) {
        errors[name].forEach(function (m) { general.appendChild(el("div", "", m)); });
        return;
      }
      input.classList.add("is-invalid");
      var cell = input.closest(".tray-cell");
      var holder = cell ? cell.querySelector(".fc-cell-messages") : input.parentNode;
      if (cell) {
        cell.classList.add("has-error");
        holder.textContent = "";
      }
      errors[name].forEach(function (m) { holder.appendChild(el("div", "invalid-feedback d-block fc-rule-error", m)); });
      if (!first) first = input;
    });
    form.insertBefore(general, form.firstChild);
    if (first) { first.focus(); if (first.select) first.select(); } else { general.scrollIntoView(); }
  }

  // Before a reading is sent or kept in the outbox: refused here means it stays on its form.
  document.addEventListener("submit", function (event) {
    var form = event.target;
    if (!form.matches || !form.matches("form[data-rules]")) return;
    var errors = window.FleetCareRules.check(form);
    if (Object.keys(errors).length) {
      event.preventDefault();
      event.stopImmediatePropagation();
      show(form, errors);
      document.dispatchEvent(new CustomEvent("fc:refused", {detail: {form: form, errors: errors}}));
    }
  }, true);

  window.FleetCareRules = {
    show: show, clearShown: clearShown,
    limitsOf: limitsOf, parseSg: parseSg, suspects: suspects, trayProblem: trayProblem, tempProblem: tempProblem,
    dateProblem: dateProblem, checkInspection: checkInspection, checkSimpleForm: checkSimpleForm,
    check: function (form) {
      var limits = limitsOf();
      if (!limits) return {};
      return form.id === "inspection-form" ? checkInspection(form, limits) : checkSimpleForm(form, limits);
    }
  };
})();

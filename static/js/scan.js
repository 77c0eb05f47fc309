// Scan a label: the camera's picture is read for a QR code (the browser's BarcodeDetector where it reads
// QR codes, else the vendored jsQR), and a FleetCare battery label opens that battery's entry screen.
// The facts come with the page (#scan-data), so it works offline from the tablet's kept copy. The rule is
// the one in fleetcare/labels/selectors.py resolve_label: the serial decides; a serial that is not one of
// yours is "another site" unless the label's site is yours. Anything else opens nothing and says why.
(function () {
  "use strict";
  var script = document.getElementById("fc-scan-script");
  var dataNode = document.getElementById("scan-data");
  var video = document.getElementById("scan-video");
  if (!script || !dataNode || !video) return;
  var data = JSON.parse(dataNode.textContent);
  var statusBox = document.getElementById("scan-status");
  var problemBox = document.getElementById("scan-problem");
  var canvas = document.createElement("canvas");
  var context = canvas.getContext("2d", {willReadFrequently: true});
  var stream = null;
  var readFrame = null;
  var lastText = "";
  var finished = false;
  var TICK_MS = 150;

  function say(text, tone) {
    statusBox.className = "alert fs-5 alert-" + (tone || "info");
    statusBox.textContent = text;
    statusBox.hidden = false;
  }

  function problem(text) {
    problemBox.textContent = text;
    problemBox.hidden = false;
    say("Point the camera at another label, or find the battery by serial.", "secondary");
  }

  function fill(template, values) {
    return template.replace(/\{(\w+)\}/g, function (_, key) { return values[key] === undefined ? "" : values[key]; });
  }

  function origins() {
    return data.bases.concat([location.origin]).map(function (base) {
      try { return new URL(base).origin; } catch (e) { return ""; }
    });
  }

  // What a code opens: {kind: "open", url} or {kind: "retired" | "other_site" | "unknown" | "not_ours", ...}.
  function judge(text) {
    var url, site, serial;
    try {
      url = new URL(text);
      if (origins().indexOf(url.origin) < 0 || url.pathname.indexOf(data.prefix) !== 0) return {kind: "not_ours"};
      var rest = url.pathname.slice(data.prefix.length).replace(/\/$/, "");
      var slash = rest.indexOf("/");
      if (slash <= 0 || slash === rest.length - 1) return {kind: "not_ours"};
      site = decodeURIComponent(rest.slice(0, slash));
      serial = decodeURIComponent(rest.slice(slash + 1));
    } catch (e) {
      return {kind: "not_ours"};
    }
    var battery = Object.prototype.hasOwnProperty.call(data.batteries, serial) ? data.batteries[serial] : null;
    if (!battery) {
      var mine = Object.prototype.hasOwnProperty.call(data.sites, site);
      return {kind: mine ? "unknown" : "other_site", site: mine ? data.sites[site] : site, serial: serial};
    }
    if (battery.retired) return {kind: "retired", serial: serial, site: battery.site};
    return {kind: "open", url: battery.url, serial: serial};
  }

  function stop() {
    if (stream) stream.getTracks().forEach(function (track) { track.stop(); });
    stream = null;
  }

  function handle(text) {
    if (!text || text === lastText || finished) return;
    lastText = text;
    var result = judge(text);
    document.documentElement.dataset.scanResult = result.kind;
    if (result.kind === "open") {
      finished = true;
      problemBox.hidden = true;
      say("Label read: opening " + result.serial + "…", "success");
      stop();
      location.assign(result.url);
      return;
    }
    var message = fill(data.messages[result.kind], result);
    if (result.kind === "unknown" && !navigator.onLine) {
      message += " This tablet has no connection: a battery added since it last kept the list is not known here yet.";
    }
    problem(message);
  }

  function loadJsQR() {
    return new Promise(function (resolve, reject) {
      if (window.jsQR) { resolve(); return; }
      var tag = document.createElement("script");
      tag.src = script.dataset.jsqr;
      tag.addEventListener("load", resolve);
      tag.addEventListener("error", reject);
      document.head.appendChild(tag);
    }).then(function () {
      document.documentElement.dataset.scanPath = "jsqr";
      readFrame = function () {
        var width = video.videoWidth, height = video.videoHeight;
        if (!width || !height) return Promise.resolve(null);
        var scale = Math.min(1, 960 / Math.max(width, height));
        canvas.width = Math.round(width * scale);
        canvas.height = Math.round(height * scale);
        context.drawImage(video, 0, 0, canvas.width, canvas.height);
        var image = context.getImageData(0, 0, canvas.width, canvas.height);
        var code = window.jsQR(image.data, image.width, image.height, {inversionAttempts: "dontInvert"});
        return Promise.resolve(code ? code.data : null);
      };
    });
  }

  function chooseReader() {
    if (!("BarcodeDetector" in window)) return loadJsQR();
    return window.BarcodeDetector.getSupportedFormats().then(function (formats) {
      if (formats.indexOf("qr_code") < 0) return loadJsQR();
      var detector = new window.BarcodeDetector({formats: ["qr_code"]});
      document.documentElement.dataset.scanPath = "barcode-detector";
      readFrame = function () {
        return detector.detect(video).then(function (codes) { return codes.length ? codes[0].rawValue : null; });
      };
    }).catch(loadJsQR);
  }

  function tick() {
    if (finished || !stream) return;
    readFrame().then(handle).catch(function () {}).then(function () { setTimeout(tick, TICK_MS); });
  }

  function cameraProblem(error) {
    var name = error && error.name;
    if (name === "NotAllowedError" || name === "SecurityError") {
      problem("The camera is not allowed for FleetCare in this browser. Allow it in the browser's site settings, or find the battery by serial.");
    } else if (name === "NotFoundError" || name === "OverconstrainedError") {
      problem("This tablet has no camera FleetCare can use. Find the battery by serial or truck number.");
    } else {
      problem("The camera could not be started" + (error && error.message ? " (" + error.message + ")" : "") + ". Find the battery by serial or truck number.");
    }
  }

  function start() {
    if (!navigator.mediaDevices || !navigator.mediaDevices.getUserMedia) {
      problem("This browser gives FleetCare no camera here (the address must start with https://). Find the battery by serial or truck number.");
      return;
    }
    chooseReader().then(function () {
      return navigator.mediaDevices.getUserMedia({audio: false, video: {facingMode: {ideal: "environment"}, width: {ideal: 1280}}});
    }).then(function (media) {
      stream = media;
      video.srcObject = media;
      return video.play();
    }).then(function () {
      say("Point the camera at the label's code.");
      document.documentElement.dataset.scanning = "1";
      tick();
    }).catch(cameraProblem);
  }

  window.addEventListener("pagehide", stop);
  document.addEventListener("DOMContentLoaded", start);
})();

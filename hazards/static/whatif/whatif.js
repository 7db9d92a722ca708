// Progressive enhancement of the what-if page: sliders and value-and-unit inputs stay in step,
// and the result fragment is fetched again (debounced) as either moves. No inline script: CSP.
(function () {
  "use strict";
  var form = document.getElementById("whatif-form");
  var target = document.getElementById("whatif-result");
  if (!form || !target || !window.fetch || !window.URLSearchParams) { return; }
  var url = form.getAttribute("data-fragment-url");
  var timer = null;
  var sequence = 0;

  function refresh() {
    var mine = ++sequence;
    var query = new URLSearchParams(new FormData(form)).toString();
    target.setAttribute("aria-busy", "true");
    fetch(url + "?" + query, { credentials: "same-origin", headers: { "HX-Request": "true" } })
      .then(function (response) { return response.text(); })
      .then(function (html) {
        if (mine !== sequence) { return; }  // a later request is on its way
        target.innerHTML = html;
        target.removeAttribute("aria-busy");
        followServer();
      });
  }

  function schedule() {
    window.clearTimeout(timer);
    timer = window.setTimeout(refresh, 250);
  }

  var FIELDS = { dosing_time: "wi-td", process_temperature: "wi-tp", activation_energy: "wi-ea" };

  // The errors of the fragment go beside their fields; fields without one are cleared.
  function showErrors() {
    Object.keys(FIELDS).forEach(function (name) {
      var item = target.querySelector('[data-field-error="' + name + '"]');
      var span = document.getElementById("wi-err-" + name);
      var input = document.getElementById(FIELDS[name]);
      if (span) { span.textContent = item ? item.getAttribute("data-message") : ""; }
      if (input) {
        if (item) { input.setAttribute("aria-invalid", "true"); }
        else { input.removeAttribute("aria-invalid"); }
      }
    });
  }

  // Without an activation energy only the measured temperature can be evaluated; with one,
  // the temperature is free again (the server says which, from the inputs it read).
  function followLock() {
    var holder = target.querySelector("[data-tp-fixed]");
    if (!holder) { return; }
    var fixed = holder.getAttribute("data-tp-fixed") === "true";
    var slider = form.querySelector("#wi-tp-slider");
    var text = form.querySelector("#wi-tp");
    var note = document.getElementById("wi-tp-fixed");
    if (slider) { slider.disabled = fixed; }
    if (text) { text.readOnly = fixed; }
    if (note) { note.hidden = !fixed; }
  }

  // After the server parsed a typed value ("2.5 h"), move the slider to it.
  function followServer() {
    showErrors();
    followLock();
    var grid = target.querySelector(".whatif-grid");
    if (!grid) { return; }
    var td = form.querySelector("#wi-td-slider");
    var tp = form.querySelector("#wi-tp-slider");
    if (tp && grid.getAttribute("data-tp-lo")) {
      tp.min = grid.getAttribute("data-tp-lo");
      tp.max = grid.getAttribute("data-tp-hi");
    }
    if (td && document.activeElement !== td) { td.value = grid.getAttribute("data-dosing-time"); }
    if (tp && document.activeElement !== tp) { tp.value = grid.getAttribute("data-process-temperature"); }
  }

  Array.prototype.forEach.call(form.querySelectorAll("input[type=range]"), function (slider) {
    var text = document.getElementById(slider.getAttribute("data-text"));
    slider.addEventListener("input", function () {
      text.value = slider.value + " " + slider.getAttribute("data-unit");
      schedule();
    });
  });
  Array.prototype.forEach.call(form.querySelectorAll("input[type=text]"), function (input) {
    input.addEventListener("input", schedule);
  });
  form.addEventListener("submit", function (event) { event.preventDefault(); refresh(); });
})();

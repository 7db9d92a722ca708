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

  // After the server parsed a typed value ("2.5 h"), move the slider to it.
  function followServer() {
    var grid = target.querySelector(".whatif-grid");
    if (!grid) { return; }
    var td = form.querySelector("#wi-td-slider");
    var tp = form.querySelector("#wi-tp-slider");
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

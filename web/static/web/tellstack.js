// Tellstack pages: a little progressive JavaScript. Every page works without it.
(function () {
  "use strict";

  // The organisation switcher submits itself when a choice is made.
  document.querySelectorAll("select[data-autosubmit]").forEach(function (el) {
    el.addEventListener("change", function () { el.form.submit(); });
  });

  // Pan and zoom of a diagram SVG by changing its viewBox; a click on a context opens it.
  function panZoom(box) {
    var svg = box.querySelector("svg");
    if (!svg) { return; }
    var w = parseFloat(svg.getAttribute("width")) || 800, h = parseFloat(svg.getAttribute("height")) || 600;
    if (!svg.getAttribute("viewBox")) { svg.setAttribute("viewBox", "0 0 " + w + " " + h); }
    svg.removeAttribute("width"); svg.removeAttribute("height");
    svg.setAttribute("preserveAspectRatio", "xMidYMid meet");
    var start = svg.getAttribute("viewBox").split(/[\s,]+/).map(Number), view = start.slice();
    function apply() { svg.setAttribute("viewBox", view.join(" ")); }
    function zoom(factor, cx, cy) {
      var nw = view[2] * factor, nh = view[3] * factor;
      view[0] = cx - (cx - view[0]) * factor; view[1] = cy - (cy - view[1]) * factor;
      view[2] = nw; view[3] = nh; apply();
    }
    function toSvg(evt) {
      var r = svg.getBoundingClientRect(), s = Math.max(view[2] / r.width, view[3] / r.height);
      var ox = (r.width * s - view[2]) / 2, oy = (r.height * s - view[3]) / 2;
      return [view[0] - ox + (evt.clientX - r.left) * s, view[1] - oy + (evt.clientY - r.top) * s, s];
    }
    box.addEventListener("wheel", function (evt) {
      evt.preventDefault();
      var p = toSvg(evt); zoom(evt.deltaY > 0 ? 1.15 : 1 / 1.15, p[0], p[1]);
    }, { passive: false });
    var drag = null, moved = false;
    box.addEventListener("pointerdown", function (evt) {
      if (evt.target.closest("button")) { return; }
      drag = { x: evt.clientX, y: evt.clientY, v: view.slice(), s: toSvg(evt)[2] }; moved = false;
      box.classList.add("dragging");
    });
    window.addEventListener("pointermove", function (evt) {
      if (!drag) { return; }
      var dx = evt.clientX - drag.x, dy = evt.clientY - drag.y;
      if (Math.abs(dx) + Math.abs(dy) > 3) { moved = true; }
      view[0] = drag.v[0] - dx * drag.s; view[1] = drag.v[1] - dy * drag.s; apply();
    });
    window.addEventListener("pointerup", function () { drag = null; box.classList.remove("dragging"); });
    box.querySelectorAll("[data-zoom]").forEach(function (btn) {
      btn.addEventListener("click", function () {
        var how = btn.getAttribute("data-zoom"), cx = view[0] + view[2] / 2, cy = view[1] + view[3] / 2;
        if (how === "reset") { view = start.slice(); apply(); } else { zoom(how === "in" ? 1 / 1.3 : 1.3, cx, cy); }
      });
    });
    var url = box.getAttribute("data-context-url");
    svg.addEventListener("click", function (evt) {
      var node = evt.target.closest(".context");
      if (!node || moved || !url) { return; }
      var at = new URLSearchParams(window.location.search).get("at");
      window.location.href = url.replace(/\/0\/$/, "/" + node.getAttribute("data-id") + "/") + (at ? "?at=" + at : "");
    });
  }
  document.querySelectorAll("[data-pan-zoom]").forEach(panZoom);

  // Contexts whose phase differs between two compared versions are outlined in both diagrams.
  document.querySelectorAll("[data-marked]").forEach(function (wrap) {
    var ids = (wrap.getAttribute("data-marked") || "").split(",").filter(Boolean);
    ids.forEach(function (id) {
      wrap.querySelectorAll('.context[data-id="' + id + '"]').forEach(function (n) { n.classList.add("marked"); });
    });
  });

  // Live progress of a run: poll its state until it ends, then reload to show the results.
  function pollRun(section) {
    var url = section.getAttribute("data-poll-run");
    if (section.getAttribute("data-terminal") === "1") { return; }
    function tick() {
      fetch(url, { credentials: "same-origin", headers: { Accept: "application/json" } })
        .then(function (r) { return r.json(); })
        .then(function (data) {
          var pct = Math.round(100 * data.progress.fraction);
          section.querySelector(".bar.overall span").style.width = pct + "%";
          section.querySelector("[data-overall]").textContent = pct;
          data.progress.chains.forEach(function (c) {
            var row = section.querySelector('[data-chain="' + c.chain + '"]');
            if (!row) { return; }
            row.querySelector("[data-chain-state]").textContent = c.state;
            row.querySelector("[data-chain-sweeps]").textContent = c.sweeps_done + " / " + c.sweeps_total;
            row.querySelector(".bar span").style.width = Math.round(100 * c.fraction) + "%";
          });
          var state = document.getElementById("run-state");
          if (state) { state.textContent = data.state; state.className = "tag " + data.state; }
          if (data.terminal) { window.location.reload(); } else { setTimeout(tick, 1500); }
        })
        .catch(function () { setTimeout(tick, 5000); });
    }
    setTimeout(tick, 1000);
  }
  document.querySelectorAll("[data-poll-run]").forEach(pollRun);

  // A background job (check, alternatives): poll until it ends, then reload.
  document.querySelectorAll("[data-poll-job]").forEach(function (el) {
    var url = el.getAttribute("data-poll-job");
    function tick() {
      fetch(url, { credentials: "same-origin" }).then(function (r) { return r.json(); }).then(function (data) {
        var label = document.querySelector("[data-job-state]");
        if (label) { label.textContent = data.state; }
        if (data.terminal) { window.location.reload(); } else { setTimeout(tick, 1500); }
      }).catch(function () { setTimeout(tick, 5000); });
    }
    setTimeout(tick, 1000);
  });
}());

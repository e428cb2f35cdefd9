// Rectifield as an installed app: only when the page is served over http(s)
// (an intranet share, a laptop running a static server), never on file://.
// The built page is one self-contained file (html[data-single-file]) whether
// it is served or opened from the disk; served with the rest of dist/ beside
// it, it is also the installed copy.  Adds the manifest link, registers the
// service worker (sw.js, written by build.sh with the build id), and says when
// a new build is ready instead of mixing old and new files: the new build
// waits until the user accepts it, then the page reloads once.
"use strict";

(function () {
  const root = document.documentElement;
  const served = location.protocol === "http:" || location.protocol === "https:";
  if (!served || !("serviceWorker" in navigator)) {
    root.setAttribute("data-sw", "off");
    return;
  }
  const link = document.createElement("link");
  link.rel = "manifest";
  link.href = "manifest.webmanifest";
  document.head.appendChild(link);

  let accepted = false;
  function offer(worker) {
    root.setAttribute("data-sw", "update-ready");
    const box = document.getElementById("update-ready");
    if (!box) return;
    box.hidden = false;
    document.getElementById("update-apply").onclick = () => {
      accepted = true;
      worker.postMessage("skip-waiting");
    };
  }
  navigator.serviceWorker.addEventListener("controllerchange", () => {
    // The first install also takes control; reload only for an accepted update.
    if (accepted) location.reload();
  });

  function watch(reg) {
    if (reg.waiting && navigator.serviceWorker.controller) offer(reg.waiting);
    reg.addEventListener("updatefound", () => {
      const w = reg.installing;
      if (!w) return;
      root.setAttribute("data-sw", navigator.serviceWorker.controller ? "update-installing" : "installing");
      w.addEventListener("statechange", () => {
        if (w.state === "installed" && navigator.serviceWorker.controller) offer(w);
        if (w.state === "redundant" && root.getAttribute("data-sw") !== "update-ready") root.setAttribute("data-sw", "failed");
      });
    });
  }

  window.addEventListener("load", () => {
    navigator.serviceWorker
      .register("sw.js")
      .then((reg) => {
        watch(reg);
        return navigator.serviceWorker.ready;
      })
      .then((reg) => {
        if (!root.getAttribute("data-sw") || /^(installing)$/.test(root.getAttribute("data-sw"))) root.setAttribute("data-sw", "ready");
        document.addEventListener("visibilitychange", () => {
          if (document.visibilityState === "visible") reg.update().catch(() => {});
        });
      })
      .catch((err) => {
        root.setAttribute("data-sw", "failed");
        // Not an error of the page: it still works, only not installed.
        console.warn("Rectifield: offline copy not installed:", err && err.message ? err.message : err);
      });
  });
})();

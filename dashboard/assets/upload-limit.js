/* realbasis: refuse a file over the upload limit in the browser, before it is sent.
 *
 * A file bigger than the limit would travel base64-encoded to the server, which may cut
 * the request off (Flask's MAX_CONTENT_LENGTH) before any callback could answer; so the
 * file's size is checked here first. The drop area's wrapper carries the limit
 * (data-max-bytes, data-limit-text) and the id of the status line (data-status-id); a
 * bigger file is stopped before the upload widget sees it and the status line says why
 * (code UI001, as the server's own check says). The server checks again either way.
 */
(function () {
  "use strict";

  function sizeText(n) {
    if (n >= 1024 * 1024) { return (n / (1024 * 1024)).toLocaleString("en-US", {minimumFractionDigits: 1, maximumFractionDigits: 1}) + " MB"; }
    if (n >= 1024) { return (n / 1024).toLocaleString("en-US", {minimumFractionDigits: 1, maximumFractionDigits: 1}) + " kB"; }
    return n.toLocaleString("en-US") + " bytes";
  }

  function p(text) { return {type: "P", namespace: "dash_html_components", props: {children: text}}; }

  function check(event, files, box) {
    if (!box || !files || !files.length) { return; }
    var limit = Number(box.getAttribute("data-max-bytes"));
    if (!(limit > 0)) { return; }
    var big = null;
    for (var i = 0; i < files.length; i++) { if (files[i].size > limit) { big = files[i]; break; } }
    if (!big) { return; }
    event.preventDefault();
    event.stopImmediatePropagation();
    if (event.type === "change" && event.target) { event.target.value = ""; }
    var message = {
      type: "Div", namespace: "dash_html_components",
      props: {className: "rb-notice rb-error", role: "alert", children: [
        p("File refused [UI001]: " + big.name + " is " + sizeText(big.size) +
          "; the largest file accepted is " + (box.getAttribute("data-limit-text") || sizeText(limit)) +
          ". Nothing was sent."),
        p("Split the file, drop columns you do not need, or ask the administrator to raise " +
          "REALBASIS_MAX_UPLOAD_BYTES.")]}};
    var status = box.getAttribute("data-status-id");
    if (status && window.dash_clientside && window.dash_clientside.set_props) {
      window.dash_clientside.set_props(status, {children: message});
    } else {
      window.alert(message.props.children[0].props.children);
    }
  }

  function boxOf(target) {
    return target && target.closest ? target.closest("[data-max-bytes]") : null;
  }

  // Capture phase on window: runs before React's own listeners, so a refused file never
  // reaches the upload widget.
  window.addEventListener("change", function (event) {
    var t = event.target;
    if (t && t.tagName === "INPUT" && t.type === "file") { check(event, t.files, boxOf(t)); }
  }, true);
  window.addEventListener("drop", function (event) {
    check(event, event.dataTransfer && event.dataTransfer.files, boxOf(event.target));
  }, true);
})();

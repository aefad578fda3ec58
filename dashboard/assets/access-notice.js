/* realbasis: say so on the page when the server refuses or fails a click.
 *
 * Dash's renderer drops a callback answered with an HTTP error: the click would look like
 * it did nothing. This script watches the renderer's callback requests
 * (_dash-update-component) and, when one is answered with an error, puts a clear message
 * at the top of the page (component rb-page-problem, dashboard/ids.PAGE_PROBLEM):
 *
 *   SH002  the reviewer link is no longer valid (revoked or expired): the page is dimmed
 *          and offers the way out (review-exit); nothing on it is current any more;
 *   SH006  not signed in as an editor (any more): a link to sign in;
 *   SH001  a change refused to a reviewer; SH009 too many wrong tokens (Retry-After);
 *   other  the code and message the server gave, or the HTTP status when it gave none;
 *   no answer at all: the server cannot be reached.
 *
 * The server's JSON refusal is {code, message, fix} (dashboard/access.refusal). Messages
 * are plain text in Dash components (never HTML), so nothing from the server is run.
 */
(function () {
  "use strict";

  var PAGE = "rb-page-problem";

  function node(type, props) { return {type: type, namespace: "dash_html_components", props: props}; }
  function p(children) { return node("P", {children: children}); }
  function link(text, href) { return node("A", {children: text, href: href, className: "rb-button"}); }

  function show(tone, lines, lost) {
    var message = node("Div", {className: "rb-notice rb-" + tone + " rb-page-notice", role: "alert",
                               children: lines.map(function (l) { return typeof l === "string" ? p(l) : l; })});
    if (lost) { document.body.classList.add("rb-access-lost"); }
    var set = window.dash_clientside && window.dash_clientside.set_props;
    if (set && document.getElementById(PAGE)) {
      set(PAGE, {children: message});
      return;
    }
    var box = document.getElementById(PAGE) || document.body.insertBefore(
      document.createElement("div"), document.body.firstChild);
    box.id = PAGE;
    box.className = "rb-page-problem";
    box.textContent = lines.filter(function (l) { return typeof l === "string"; }).join(" ");
  }

  function said(info) {
    var text = "[" + info.code + "] " + (info.message || "");
    return info.fix ? text + ". " + info.fix : text;
  }

  function refused(status, info, retryAfter) {
    var code = info && info.code;
    if (code === "SH002") {
      show("error", [node("Strong", {children: "This reviewer link is no longer valid."}),
                     said(info), "Nothing shown on this page is current any more.",
                     p(link("Leave the reviewer view", "review-exit"))], true);
    } else if (code === "SH006") {
      show("error", [node("Strong", {children: "You are not signed in as an editor."}), said(info),
                     p(link("Sign in", "editor-login"))], true);
    } else if (code === "SH001") {
      show("warn", ["Not changed: " + said(info)], false);
    } else if (code === "SH009" || status === 429) {
      show("warn", ["Too many tries: " + (info ? said(info) : "") +
                    (retryAfter ? " Try again in " + retryAfter + " s." : "")], false);
    } else if (code) {
      show("error", ["Not done: " + said(info)], false);
    } else {
      show("error", ["The server could not answer this request (HTTP " + status + "). " +
                     "Reload the page; if it happens again, tell the administrator the time."], false);
    }
  }

  var original = window.fetch;
  if (!original) { return; }
  window.fetch = function (input, init) {
    var url = typeof input === "string" ? input : (input && input.url) || "";
    var answer = original.apply(this, arguments);
    if (url.indexOf("_dash-update-component") < 0 && url.indexOf("_realbasis/alive") < 0) {
      return answer;
    }
    return answer.then(function (resp) {
      if (resp.status >= 400) {
        var retry = resp.headers.get("Retry-After");
        resp.clone().json().then(function (info) { refused(resp.status, info, retry); },
                                 function () { refused(resp.status, null, retry); });
      }
      return resp;
    }, function (err) {
      show("error", ["The server cannot be reached. Check the connection and reload the page."], false);
      throw err;
    });
  };
})();

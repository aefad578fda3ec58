/* realbasis: the shell's clientside callbacks (dashboard/app.py registers them).
 *
 * switchScreen     shows one screen, from a click on the navigation or the address's
 *                  #key (a reload, a copied address, Back/Forward); no round trip. The
 *                  first time a screen is shown its contents are put into its section
 *                  from the store rb-sections (dashboard/app.py lazy_sections).
 * gateScreens      copies the workspace into the shown screen's gate store (rb-ref-<key>)
 *                  when that store is behind; hidden screens' gates stay as they are, so
 *                  their callbacks run only once they are opened. A screen the page came
 *                  with computed (its gate says "opening", with the choices the server
 *                  used) is opened again, with {address: true}, only when the address it
 *                  was opened with holds other choices for it.
 * rememberChoices  keeps the shown screen's choices in the address (#key?name=value&...),
 *                  replacing the history entry (no new one per choice); the screens read
 *                  them back on load (screens/_shared/view.address_choices).
 *
 * Nothing here builds HTML: values go into component props and the address only.
 */
(function () {
  "use strict";
  var NO = function () { return window.dash_clientside.no_update; };
  // dcc.Markdown (tables and notes: components.html_block) fetches highlight.js (140 kB)
  // the first time it draws, unless window.hljs is there; these pages hold no code to
  // highlight, so a stand-in that highlights nothing saves that request.
  if (!window.hljs) { window.hljs = {highlightElement: function () {}}; }
  var remembered = {};  // screen key -> query string of its last choices
  var filled = {};      // screen keys whose contents are on the page
  var OPENING_COOKIE = "rb_opening";  // dashboard/app.py OPENING_COOKIE
  var ALIVE = "_realbasis/alive";  // dashboard/app.py: 204, or the access layer's refusal
  // the address as the page was opened, before any screen's choices are written into it
  var openedHash = window.location.hash;
  // ... and told to the server for the page's layout request, which cannot see the
  // address's #fragment: dashboard/app.py opening() computes the screen it names, with its
  // choices, into the layout (a short-lived cookie of this path, read only there)
  document.cookie = OPENING_COOKIE + "=" + encodeURIComponent(openedHash.replace(/^#/, "").slice(0, 1000)) +
    "; path=" + window.location.pathname + "; max-age=60; SameSite=Strict";
  var gated = {};       // screen keys whose gate has been looked at once

  function keyOf(hash) {
    var h = (hash || "").replace(/^#/, "");
    var q = h.indexOf("?");
    return decodeURIComponent(q < 0 ? h : h.slice(0, q));
  }

  function queryOf(hash) {
    var h = (hash || "").replace(/^#/, "");
    var q = h.indexOf("?");
    return q < 0 ? "" : h.slice(q + 1);
  }

  function address(key) {
    var q = remembered[key];
    return window.location.pathname + window.location.search + "#" + encodeURIComponent(key) +
      (q ? "?" + q : "");
  }

  window.dash_clientside = Object.assign({}, window.dash_clientside, {
    realbasis: {
      switchScreen: function () {
        var args = Array.prototype.slice.call(arguments);
        var cc = window.dash_clientside.callback_context;
        var keys = cc.inputs_list.slice(0, -1).map(function (i) { return i.id.replace(/^rb-nav-/, ""); });
        var hash = args[keys.length];
        var current = args[keys.length + 1];
        var sections = args[keys.length + 2] || {};
        var chosen = null;
        var fromNav = false;
        (cc.triggered || []).forEach(function (t) {
          var id = (t.prop_id || "").split(".")[0];
          if (id.indexOf("rb-nav-") === 0 && t.value) { chosen = id.replace(/^rb-nav-/, ""); fromNav = true; }
        });
        if (chosen === null) {
          chosen = keyOf(hash);
          var q = queryOf(hash);
          if (q && remembered[chosen] === undefined) { remembered[chosen] = q; }
        }
        if (keys.indexOf(chosen) < 0) { chosen = keys.indexOf(current) >= 0 ? current : keys[0]; }
        if (fromNav && chosen !== current) {
          window.history.pushState({}, "", address(chosen));
        }
        if (fromNav && window.fetch) {
          // switching runs here without a round trip; this one small request lets the
          // server say at once when the page's access has ended (a revoked or expired
          // reviewer link: assets/access-notice.js shows it)
          window.fetch(ALIVE, {cache: "no-store", headers: {"Accept": "application/json"}})
            .catch(function () { /* access-notice.js says the server cannot be reached */ });
        }
        var hidden = keys.map(function (k) { return k !== chosen; });
        var classes = keys.map(function (k) { return "rb-nav-button" + (k === chosen ? " rb-nav-active" : ""); });
        // a screen's contents join the page the first time it is shown (app.lazy_sections)
        var contents = keys.map(function (k) {
          if (k !== chosen || filled[k] || sections[k] === undefined) { return NO(); }
          filled[k] = true;
          return sections[k];
        });
        return hidden.concat(classes, contents, [chosen]);
      },

      gateScreens: function (ws, screen) {
        var cc = window.dash_clientside.callback_context;
        var gates = Array.prototype.slice.call(arguments, 2);
        var keys = cc.states_list.map(function (s) { return s.id.replace(/^rb-ref-/, ""); });
        return keys.map(function (k, i) {
          var g = gates[i];
          if (!ws || k !== screen) { return NO(); }
          var first = !gated[k];
          gated[k] = true;
          if (g && g.id === ws.id && g.version === ws.version) {
            // The page came with this screen computed (dashboard/app.py opening) for the
            // choices in g.query; when the address it was opened with holds others (a
            // cookie from another tab reached the server first), they are applied by
            // opening the screen again, the address's choices first.
            if (first && g.opening && keyOf(openedHash) === k &&
                queryOf(openedHash) !== (g.query || "")) {
              return Object.assign({}, ws, {address: true});
            }
            return NO();
          }
          return ws;
        });
      },

      rememberChoices: function () {
        var args = Array.prototype.slice.call(arguments);
        var meta = args[args.length - 1] || {};
        var screen = args[args.length - 2];
        var values = args.slice(0, -2);
        if (!meta.key || screen !== meta.key) { return NO(); }
        var params = new URLSearchParams();
        (meta.names || []).forEach(function (name, i) {
          var v = values[i];
          if (v === null || v === undefined || v === "") { return; }
          (Array.isArray(v) ? v : [v]).forEach(function (x) { params.append(name, String(x)); });
        });
        remembered[meta.key] = params.toString();
        if (keyOf(window.location.hash) === meta.key || !window.location.hash) {
          window.history.replaceState(window.history.state, "", address(meta.key));
        }
        return NO();
      }
    }
  });
})();

// clockprep's page script: sends the spec (and any uploaded times) to the server, which
// answers with the form, the sheets and any refusal. Requests run one after another, each on
// the text the last answer gave, so no edit is lost. No library, no build step.
(function () {
  "use strict";
  var token = document.querySelector('meta[name="clockprep-token"]').content;
  var textarea = document.getElementById("toml");
  var formBox = document.getElementById("form");
  var refusal = document.getElementById("refusal");
  var changedBox = document.getElementById("changed");
  var panes = document.getElementById("panes");
  var status = document.getElementById("status");
  var text = textarea.value;
  var times = null;
  var queue = Promise.resolve();
  var suggestions = [];
  var api = (window.clockprep = { lastUpdateMs: null, updates: 0, lastError: null });

  function setStatus(cls, words) {
    status.className = "status " + cls;
    status.textContent = words;
  }

  function post(url, body) {
    return fetch(url, {
      method: "POST",
      headers: { "content-type": "application/json" },
      body: JSON.stringify(body),
    }).then(function (r) {
      if (!r.ok) {
        return r.text().then(function (t) {
          throw new Error(r.status + ": " + t);
        });
      }
      return r.json();
    });
  }

  // Queue a request whose body is built when its turn comes (on the latest text).
  function send(url, makeBody) {
    var t0 = performance.now();
    queue = queue
      .then(function () {
        setStatus("busy", "computing");
        return post(url, makeBody());
      })
      .then(function (reply) {
        show(reply, t0);
      })
      .catch(function (e) {
        setStatus("bad", "server: " + e.message);
      });
    return queue;
  }
  api.send = send;

  function focusedPath() {
    var a = document.activeElement;
    if (!a || !formBox.contains(a)) return null;
    var f = a.closest("[data-path]");
    var inputs = f ? Array.prototype.indexOf.call(f.querySelectorAll("input"), a) : 0;
    return f ? { path: f.getAttribute("data-path"), n: inputs } : null;
  }

  function refocus(saved) {
    if (!saved) return;
    var f = formBox.querySelector('[data-path="' + CSS.escape(saved.path) + '"]');
    var inputs = f ? f.querySelectorAll("input") : [];
    if (inputs[saved.n]) inputs[saved.n].focus();
  }

  var shown = {};
  var formShown = null;
  function setPane(pane) {
    var box = panes.querySelector('[data-pane="' + pane.id + '"]');
    if (!box) return;
    // A pane whose sheet is unchanged is left as it is (no re-layout).
    var key = (pane.note || "") + "\u0000" + (pane.html || "");
    if (shown[pane.id] === key) return;
    shown[pane.id] = key;
    box.querySelector(".note").textContent = pane.note || "";
    var host = box.querySelector(".sheet");
    var root = host.shadowRoot || host.attachShadow({ mode: "open" });
    root.innerHTML = pane.html
      ? "<style>:host{display:block;padding:4px 8px;font-size:14px}</style>" + pane.html
      : "";
  }

  function showSuggestions() {
    panes.querySelectorAll(".suggest").forEach(function (s) {
      s.textContent = "";
    });
    suggestions.forEach(function (s) {
      var box = panes.querySelector('.suggest[data-for="' + s.kind + '"]');
      if (!box) return;
      var b = document.createElement("button");
      b.type = "button";
      b.className = "apply";
      b.setAttribute("data-kind", s.kind);
      b.textContent = "Apply: " + s.label;
      var pre = document.createElement("pre");
      pre.textContent = s.toml.split("\n").filter(function (l) {
        return l && l.charAt(0) !== "#";
      }).join("\n");
      box.appendChild(b);
      box.appendChild(pre);
    });
  }

  function showRefusal(e) {
    refusal.textContent = "";
    if (!e) {
      refusal.classList.add("hidden");
      return;
    }
    var head = document.createElement("strong");
    head.textContent = "The spec is refused, so the sheets below are the last good ones (greyed): " + e.message;
    refusal.appendChild(head);
    if (e.help) {
      var help = document.createElement("div");
      help.textContent = "Fix: " + e.help;
      refusal.appendChild(help);
    }
    if (e.line) {
      var go = document.createElement("button");
      go.type = "button";
      go.id = "goto";
      go.textContent = "Show " + e.place + " in the TOML text";
      go.addEventListener("click", function () {
        selectTab("form", "toml");
        textarea.focus();
        textarea.setSelectionRange(e.start, Math.max(e.end, e.start + 1));
      });
      refusal.appendChild(go);
    }
    var pre = document.createElement("pre");
    pre.textContent = e.report;
    refusal.appendChild(pre);
    refusal.classList.remove("hidden");
  }

  function show(reply, t0) {
    text = reply.text;
    if (document.activeElement !== textarea && textarea.value !== text) textarea.value = text;
    if (reply.form_html !== null && reply.form_html !== formShown) {
      formShown = reply.form_html;
      var saved = focusedPath();
      formBox.innerHTML = reply.form_html;
      refocus(saved);
    }
    var c = reply.computed;
    api.lastError = c.error;
    showRefusal(c.error);
    if (c.error) {
      panes.classList.add("stale");
      setStatus("bad", "refused: see the message");
    } else {
      panes.classList.remove("stale");
      c.panes.forEach(setPane);
      suggestions = c.suggestions;
      showSuggestions();
      setStatus(c.flagged ? "flag" : "ok", c.flagged ? "computed: something is flagged" : "computed");
    }
    if (reply.changed) {
      changedBox.innerHTML = "<strong>What changed in the spec:</strong>" + reply.changed;
      changedBox.classList.remove("hidden");
    } else {
      changedBox.classList.add("hidden");
    }
    api.lastUpdateMs = performance.now() - t0;
    api.serverMs = reply.server_ms;
    api.updates += 1;
  }

  function body(extra) {
    var b = { text: text, times: times };
    for (var k in extra) b[k] = extra[k];
    return b;
  }

  function compute() {
    return send("/api/compute", function () {
      text = textarea.value;
      return body({});
    });
  }
  api.compute = compute;

  function edit(e) {
    return send("/api/edit", function () {
      return body({ edits: [e] });
    });
  }
  api.edit = edit;

  function fieldValue(field) {
    var num = field.querySelector("input.num");
    if (num) {
      var n = num.value.trim();
      return n ? n + " " + field.querySelector("input.unit").value.trim() : "";
    }
    var v = field.querySelector("input.value");
    return v.type === "checkbox" ? String(v.checked) : v.value;
  }

  formBox.addEventListener("change", function (ev) {
    var field = ev.target.closest(".field");
    if (!field) return;
    edit({ op: "set", path: JSON.parse(field.getAttribute("data-path")), value: fieldValue(field) });
  });
  formBox.addEventListener("keydown", function (ev) {
    if (ev.key === "Enter" && ev.target.tagName === "INPUT") {
      ev.preventDefault();
      ev.target.dispatchEvent(new Event("change", { bubbles: true }));
    }
  });
  formBox.addEventListener("click", function (ev) {
    var b = ev.target.closest("button[data-op]");
    if (!b) return;
    var e = { op: b.getAttribute("data-op"), path: JSON.parse(b.getAttribute("data-path")) };
    if (b.hasAttribute("data-index")) e.index = Number(b.getAttribute("data-index"));
    edit(e);
  });

  var typing = null;
  textarea.addEventListener("input", function () {
    clearTimeout(typing);
    typing = setTimeout(compute, 250);
  });

  panes.addEventListener("click", function (ev) {
    var b = ev.target.closest("button.apply");
    if (!b) return;
    apply(b.getAttribute("data-kind"));
  });
  function apply(kind) {
    return send("/api/apply", function () {
      return body({ kind: kind });
    });
  }
  api.apply = apply;

  document.getElementById("times").addEventListener("change", function (ev) {
    var f = ev.target.files[0];
    if (!f) return;
    f.text().then(function (csv) {
      setTimes(f.name, csv);
    });
  });
  function setTimes(name, csv) {
    times = { name: name, csv: csv };
    return compute();
  }
  api.setTimes = setTimes;

  // Print and download forms carry the page's spec and times when sent.
  panes.addEventListener("submit", function (ev) {
    var f = ev.target;
    f.elements.spec.value = text;
    f.elements.times_name.value = times ? times.name : "";
    f.elements.times_csv.value = times ? times.csv : "";
  });
  // The same request as a print button, read back as bytes (for a check of the PDF).
  api.fetchOut = function (file, fields) {
    var data = new URLSearchParams(fields || {});
    data.set("spec", text);
    data.set("times_name", times ? times.name : "");
    data.set("times_csv", times ? times.csv : "");
    return fetch("/out/" + file, { method: "POST", body: data }).then(function (r) {
      return r.arrayBuffer().then(function (buf) {
        var bytes = new Uint8Array(buf), s = "";
        for (var i = 0; i < bytes.length; i += 0x8000) {
          s += String.fromCharCode.apply(null, bytes.subarray(i, i + 0x8000));
        }
        return { status: r.status, type: r.headers.get("content-type"), base64: btoa(s) };
      });
    });
  };

  function download(name, content, type) {
    var a = document.createElement("a");
    a.href = URL.createObjectURL(new Blob([content], { type: type }));
    a.download = name;
    document.body.appendChild(a);
    a.click();
    a.remove();
  }
  var specName = document.querySelector(".file").textContent.split("/").pop() || "spec.toml";
  document.getElementById("download-spec").addEventListener("click", function () {
    download(specName, text, "application/toml");
  });
  var saveButton = document.getElementById("save");
  var saveMessage = document.getElementById("save-message");
  if (saveButton) {
    saveButton.addEventListener("click", function () {
      queue = queue.then(function () {
        return fetch("/api/save", {
          method: "POST",
          headers: { "content-type": "application/json", "x-clockprep-token": token },
          body: JSON.stringify({ text: text }),
        })
          .then(function (r) {
            return r.json();
          })
          .then(function (s) {
            saveMessage.textContent = s.message;
            if (s.download) download(specName, text, "application/toml");
          });
      });
    });
  }

  function selectTab(group, id) {
    var scope = group === "form" ? document.querySelector(".editor") : document.querySelector(".sheets");
    scope.querySelectorAll(".tab").forEach(function (t) {
      t.classList.toggle("on", t.getAttribute("data-tab") === id);
    });
    scope.querySelectorAll("[data-pane]").forEach(function (p) {
      p.classList.toggle("hidden", p.getAttribute("data-pane") !== id);
    });
  }
  api.selectTab = selectTab;
  document.querySelectorAll("nav.tabs").forEach(function (nav) {
    var group = nav.closest(".editor") ? "form" : "sheets";
    nav.addEventListener("click", function (ev) {
      var t = ev.target.closest(".tab");
      if (t) selectTab(group, t.getAttribute("data-tab"));
    });
  });

  compute();
})();

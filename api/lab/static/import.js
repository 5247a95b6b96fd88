// etchlog lab import: a file up to one request's limit is sent by the form
// and the server draws the report. A larger one is cut here into parts
// between coupons (each with the header row and the file row it starts on),
// sent two at a time with a progress bar, and the reports are added up. Each
// part is its own transaction on a commit, as with "etchlog import coupons".
(function () {
  "use strict";
  var form = document.getElementById("import-form");
  if (!form || !window.fetch || !window.Blob || !Blob.prototype.text) { return; }
  // A part stays near this size (the form may say another, in bytes).
  var partSize = +form.dataset.partSize || 256 * 1024;

  // records splits CSV text (RFC 4180) into records with their offsets and
  // fields; empty lines are skipped, as the server's reader skips them.
  function records(text) {
    var out = [], i = 0, n = text.length;
    while (i < n) {
      var start = i, fields = [], field = "", quoted = false;
      for (;;) {
        if (i >= n) { fields.push(field); break; }
        var c = text[i];
        if (quoted) {
          if (c === '"') {
            if (text[i + 1] === '"') { field += '"'; i += 2; continue; }
            quoted = false; i++; continue;
          }
          field += c; i++; continue;
        }
        if (c === '"') { quoted = true; i++; continue; }
        if (c === ",") { fields.push(field); field = ""; i++; continue; }
        if (c === "\r" && text[i + 1] === "\n") { fields.push(field); i += 2; break; }
        if (c === "\n") { fields.push(field); i++; break; }
        field += c; i++;
      }
      if (fields.length === 1 && fields[0] === "" && text.slice(start, i).trim() === "") { continue; }
      out.push({ start: start, end: i, fields: fields });
    }
    return out;
  }

  // parts cuts the file where the coupon mark changes, near partSize bytes.
  function parts(text) {
    if (text.charCodeAt(0) === 0xfeff) { text = text.slice(1); }
    var recs = records(text);
    if (recs.length < 2) { return { list: [{ body: text, firstRow: 2, rows: 0 }], rows: 0 }; }
    var head = text.slice(0, recs[0].end);
    if (!/\n$/.test(head)) { head += "\n"; }
    var mark = recs[0].fields.indexOf("coupon_mark");
    var list = [], start = 1, prev = null, partOf = {}, shared = false;
    for (var k = 1; k < recs.length; k++) {
      var m = mark >= 0 ? recs[k].fields[mark] : prev;
      var size = recs[k].end - recs[start].start + head.length;
      if (k > start && m !== prev && size > partSize) {
        list.push({ body: head + text.slice(recs[start].start, recs[k].start), firstRow: start + 1, rows: k - start });
        start = k;
      }
      prev = m;
      // shared: a coupon's rows lie in two parts.
      if (Object.prototype.hasOwnProperty.call(partOf, m) && partOf[m] !== list.length) { shared = true; }
      partOf[m] = list.length;
    }
    list.push({ body: head + text.slice(recs[start].start), firstRow: start + 1, rows: recs.length - start });
    return { list: list, rows: recs.length - 1, shared: shared };
  }

  var bar = document.getElementById("import-bar");
  var barBox = document.getElementById("import-progress");
  var barLabel = document.getElementById("import-bar-label");
  var count = document.getElementById("import-count");
  var live = document.getElementById("import-live");

  function el(tag, text) { var e = document.createElement(tag); if (text !== undefined) { e.textContent = text; } return e; }

  // show draws the added-up report, and after a dry run the commit button.
  function show(mode, rep, file) {
    live.textContent = "";
    var sec = el("section"); sec.id = "report"; sec.setAttribute("data-mode", mode);
    sec.appendChild(el("h2", (mode === "commit" ? "Imported" : "Checked, nothing written") + ": " + file.name));
    var sum = el("p", rep.rows + " rows, " + rep.coupons + " coupons: " + rep.new_coupons + " new " +
      (mode === "commit" ? "written" : "to import") + " with " + rep.new_sections + " sections, " +
      rep.unchanged_coupons + " already stored unchanged, " + rep.refused_coupons + " refused.");
    sum.id = "summary"; sum.setAttribute("role", "status");
    sec.appendChild(sum);
    if (rep.errors.length) {
      var box = el("div"); box.className = "table-box";
      var t = el("table"); t.id = "refused"; t.setAttribute("aria-label", "Refused values");
      var hr = el("tr");
      ["Row", "Column", "Why it is refused"].forEach(function (h) { var th = el("th", h); th.scope = "col"; hr.appendChild(th); });
      var thead = el("thead"); thead.appendChild(hr); t.appendChild(thead);
      var tb = el("tbody");
      rep.errors.forEach(function (e) {
        var tr = el("tr"), td = el("td", String(e.row)); td.className = "num"; tr.appendChild(td);
        var col = el("td"); if (e.column) { col.appendChild(el("code", e.column)); } else { col.textContent = "the whole row"; }
        tr.appendChild(col); tr.appendChild(el("td", e.reason)); tb.appendChild(tr);
      });
      t.appendChild(tb); box.appendChild(t); sec.appendChild(box);
    } else {
      sec.appendChild(el("p", "No row is refused."));
    }
    if (mode === "dry-run" && rep.new_coupons > 0) {
      var b = el("button", "Import the " + rep.new_coupons + " new coupons"); b.type = "button"; b.id = "commit";
      b.addEventListener("click", function () { run(file, "commit"); });
      var act = el("div"); act.className = "actions"; act.appendChild(b); sec.appendChild(act);
    }
    live.appendChild(sec);
  }

  // run sends the parts in mode, two in flight as "etchlog import coupons"
  // sends them (one at a time when a coupon's rows lie in two parts), reads
  // the answers in file order and draws the progress. After a refused part
  // no other is sent; the one already in flight is said to be stored when
  // it was.
  function run(file, mode) {
    var old = document.getElementById("report");
    if (old) { old.remove(); }
    file.text().then(function (text) {
      var p = parts(text), done = 0, sent = 0, read = 0, answers = [];
      var inFlight = p.shared ? 1 : 2;
      var rep = { rows: 0, coupons: 0, new_coupons: 0, new_sections: 0, unchanged_coupons: 0, refused_coupons: 0, errors: [] };
      barBox.hidden = false;
      barLabel.textContent = mode === "commit" ? "Importing" : "Checking";
      bar.max = Math.max(p.rows, 1); bar.value = 0;
      count.textContent = "0 of " + p.rows + " rows";
      var token = form.elements.form_token.value;
      function post(part) {
        return fetch("/lab/import/part?mode=" + mode + "&first_row=" + part.firstRow, {
          method: "POST", credentials: "same-origin",
          headers: { "Content-Type": "text/csv", "X-Form-Token": token }, body: part.body
        }).then(function (res) {
          return res.json().then(function (body) {
            if (!res.ok) { throw new Error((body.Title || body.title || res.statusText) + (body.Detail ? ": " + body.Detail : "")); }
            return body;
          });
        });
      }
      function send() {
        while (sent < p.list.length && sent - read < inFlight) {
          answers[sent] = post(p.list[sent]);
          answers[sent].catch(function () {}); // read in file order by next
          sent++;
        }
      }
      function add(body) {
        ["rows", "coupons", "new_coupons", "new_sections", "unchanged_coupons", "refused_coupons"].forEach(function (k) { rep[k] += body[k]; });
        rep.errors = rep.errors.concat(body.errors);
      }
      function next() {
        if (read === p.list.length) { show(mode, rep, file); return; }
        var part = p.list[read];
        answers[read].then(function (body) {
          add(body);
          done += part.rows; bar.value = done;
          count.textContent = done + " of " + p.rows + " rows";
          read++;
          send();
          next();
        }, function (err) {
          var later = p.list.slice(read + 1, sent);
          Promise.all(answers.slice(read + 1, sent).map(function (a) {
            return a.then(function () { return true; }, function () { return false; });
          })).then(function (ok) {
            var went = later.filter(function (q, j) { return ok[j]; }).map(function (q) {
              return "rows " + q.firstRow + "–" + (q.firstRow + q.rows - 1);
            });
            live.textContent = "";
            var msg = el("p", "Stopped at the part starting on row " + part.firstRow + ": " + err.message +
              (mode === "commit" ? ". The parts before it are stored" + (went.length ? ", and so is the part already sent after it (" + went.join(", ") + ")" : "") +
                "; importing the file again writes only what is missing." : "."));
            msg.className = "problem"; msg.setAttribute("role", "alert"); live.appendChild(msg);
          });
        });
      }
      send();
      next();
    });
  }

  form.addEventListener("submit", function (ev) {
    var file = form.elements.file.files[0];
    if (!file || file.size <= +form.dataset.limit) { return; } // one request: the server draws the report
    ev.preventDefault();
    run(file, "dry-run");
  });
})();

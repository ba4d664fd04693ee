// The page at /: builds a case from the form, sends it to the service's API and shows
// the figure, the events of each side and the warnings. Plain script, no library, and
// no request to any host but the service that served the page.
"use strict";

(function () {
  const $ = (id) => document.getElementById(id);

  // Form fields by the JSON pointer of the case member they set.
  const FIELD_OF = {
    "/flow/reynolds": "reynolds",
    "/flow/speed": "speed",
    "/flow/kinematic_viscosity": "kinematic_viscosity",
    "/flow/turbulence_intensity": "turbulence_intensity",
    "/flow/mach": "mach",
    "/flow": "flow",
    "/transition/criterion": "criterion",
    "/laminar/method": "laminar-method",
    "/transition/trip/upper": "trip-upper",
    "/transition/trip/lower": "trip-lower",
    "/transition/trip/surface": "trip-surface",
  };
  // What each array of point data holds, for messages that point into it.
  const DATA_NAMES = {
    "/surface/x": "x",
    "/surface/y": "y",
    "/surface/s": "s",
    "/pressure/cp": "Cp",
    "/pressure/edge_velocity": "edge velocity Ue/U\u221e",
    "/pressure/p": "pressure p",
    "/body/radius": "radius",
  };
  const NUMBER_FIELDS = [
    "reynolds",
    "speed",
    "kinematic_viscosity",
    "turbulence_intensity",
    "mach",
    "trip-upper",
    "trip-lower",
    "trip-surface",
  ];

  let baseCase = null; // the case document from a case file or the demonstration
  let baseLabel = "";
  let lastCase = null;
  let lastResultText = null;
  let figureUrl = null;

  // ------------------------------------------------------------------ messages

  function clearErrors() {
    for (const node of document.querySelectorAll(".error")) {
      node.textContent = "";
      node.hidden = true;
    }
    for (const node of document.querySelectorAll("[aria-invalid]")) {
      node.removeAttribute("aria-invalid");
    }
  }

  function showError(fieldId, text) {
    let box = $(fieldId + "-error");
    if (!box) {
      box = $("general-error");
    }
    box.textContent = box.textContent ? box.textContent + " " + text : text;
    box.hidden = false;
    const field = $(fieldId);
    if (field && field.tagName !== "FIELDSET") {
      field.setAttribute("aria-invalid", "true");
    }
  }

  // The service's reasons (msgspec's wording for types and ranges) in plain words.
  function plain(reason) {
    const rules = [
      [/^Expected `array` of length >= (\d+)/, (m) => "needs at least " + m[1] + " points"],
      [/^Expected `array` of length <= (\d+)/, (m) => "may have at most " + m[1] + " points"],
      [/^Expected `(?:float|int|number)` >= ([-+.e\d]+)/, (m) => "must be at least " + m[1]],
      [/^Expected `(?:float|int|number)` <= ([-+.e\d]+)/, (m) => "must be at most " + m[1]],
      [/^Expected `(?:float|int|number)` > ([-+.e\d]+)/, (m) => "must be greater than " + m[1]],
      [/^Expected `(?:float|int|number)` < ([-+.e\d]+)/, (m) => "must be less than " + m[1]],
      [/^Expected `(?:float|int|number)`, got `\w+`/, () => "must be a number"],
    ];
    for (const [pattern, say] of rules) {
      const match = pattern.exec(reason);
      if (match) {
        return say(match) + reason.slice(match[0].length);
      }
    }
    return reason;
  }

  function dataField() {
    return source() === "csv" ? "csv-text" : "case-file";
  }

  // One problem of the service's answer, shown next to the field it names.
  function placeProblem(pointer, reason) {
    const text = plain(reason);
    if (pointer === "/text" || pointer === "/columns" || pointer === "/delimiter") {
      showError("csv-text", "The CSV table cannot be used: " + text.replace(/^CSV(, |: )/, ""));
      return;
    }
    if (FIELD_OF[pointer]) {
      showError(FIELD_OF[pointer], text.charAt(0).toUpperCase() + text.slice(1) + ".");
      return;
    }
    if (pointer.startsWith("/transition/trip")) {
      showError("trip-upper", "Trips: " + text);
      return;
    }
    for (const [prefix, name] of Object.entries(DATA_NAMES)) {
      if (pointer === prefix || pointer.startsWith(prefix + "/")) {
        const index = pointer.slice(prefix.length + 1);
        const where = index ? name + " of data row " + (Number(index) + 1) : name;
        showError(dataField(), "In the data, " + where + ": " + text);
        return;
      }
    }
    if (/^\/(surface|pressure|body)(\/|$)/.test(pointer)) {
      showError(dataField(), "In the data (" + pointer + "): " + text);
      return;
    }
    showError("general-error", (pointer ? pointer + ": " : "") + text);
  }

  // RFC 9457 problem details: each error next to its field (pointers less ``prefix``).
  function showProblemDocument(problem, prefix) {
    if (problem && Array.isArray(problem.errors) && problem.errors.length) {
      for (const error of problem.errors) {
        let pointer = String(error.pointer || "");
        if (prefix && pointer.startsWith(prefix)) {
          pointer = pointer.slice(prefix.length);
        }
        placeProblem(pointer, String(error.reason || ""));
      }
    } else if (problem && problem.detail) {
      showError("general-error", String(problem.detail));
    } else {
      showError("general-error", "The service could not analyse the case.");
    }
  }

  // Show an answer that is not 200: problem details, or a plain failure.
  async function showProblem(response) {
    let problem = null;
    try {
      problem = await response.json();
    } catch (_) {
      problem = null;
    }
    if (problem && (problem.errors || problem.detail)) {
      showProblemDocument(problem, "");
    } else {
      showError("general-error", "The service answered " + response.status + ".");
    }
  }

  // ------------------------------------------------------------------ the form

  function source() {
    return $("source-case").checked ? "case" : "csv";
  }

  function setSource(kind) {
    $("source-csv").checked = kind === "csv";
    $("source-case").checked = kind === "case";
    $("csv-panel").hidden = kind !== "csv";
    $("case-panel").hidden = kind !== "case";
  }

  function flowMode() {
    return $("mode-speed").checked ? "speed" : "reynolds";
  }

  function setFlowMode(mode) {
    $("mode-speed").checked = mode === "speed";
    $("mode-reynolds").checked = mode !== "speed";
    $("speed-field").hidden = mode !== "speed";
    $("reynolds-field").hidden = mode === "speed";
  }

  function lengthUnit(mode) {
    return mode === "speed" ? "m" : "coordinate unit";
  }

  // The number in a field: undefined when empty, null (with a message) when unreadable.
  function numberOf(id) {
    const text = $(id).value.trim();
    if (!text) {
      return undefined;
    }
    const value = Number(text.replace(",", "."));
    if (!Number.isFinite(value)) {
      showError(id, "\u201c" + text + "\u201d is not a number.");
      return null;
    }
    return value;
  }

  function setField(id, value) {
    $(id).value = value === undefined || value === null ? "" : String(value);
  }

  // The form takes the flow and transition of a case document.
  function fillForm(doc) {
    const flow = doc && typeof doc.flow === "object" && doc.flow ? doc.flow : {};
    if (flow.speed != null && flow.kinematic_viscosity != null) {
      setFlowMode("speed");
    } else if (flow.reynolds != null) {
      setFlowMode("reynolds");
    }
    setField("reynolds", flow.reynolds);
    setField("speed", flow.speed);
    setField("kinematic_viscosity", flow.kinematic_viscosity);
    setField("turbulence_intensity", flow.turbulence_intensity);
    setField("mach", flow.mach == null ? 0 : flow.mach);
    const transition = doc && typeof doc.transition === "object" && doc.transition ? doc.transition : {};
    $("criterion").value = transition.criterion || "michel";
    const laminar = doc && typeof doc.laminar === "object" && doc.laminar ? doc.laminar : {};
    $("laminar-method").value = laminar.method || "thwaites";
    const trip = transition.trip && typeof transition.trip === "object" ? transition.trip : {};
    setField("trip-upper", trip.upper);
    setField("trip-lower", trip.lower);
    setField("trip-surface", trip.surface);
  }

  // The case: the data's members, then the flow and transition of the form.
  function buildCase(members) {
    const values = {};
    let unreadable = false;
    for (const id of NUMBER_FIELDS) {
      values[id] = numberOf(id);
      unreadable = unreadable || values[id] === null;
    }
    if (unreadable) {
      return null;
    }
    const doc = Object.assign({}, members);
    const flow = Object.assign({}, typeof doc.flow === "object" && doc.flow ? doc.flow : {});
    for (const key of ["reynolds", "speed", "kinematic_viscosity", "turbulence_intensity", "mach"]) {
      delete flow[key];
    }
    const wanted = flowMode() === "speed" ? ["speed", "kinematic_viscosity"] : ["reynolds"];
    for (const key of wanted.concat(["turbulence_intensity", "mach"])) {
      if (values[key] !== undefined) {
        flow[key] = values[key];
      }
    }
    doc.flow = flow;
    const transition = Object.assign(
      {},
      typeof doc.transition === "object" && doc.transition ? doc.transition : {},
    );
    transition.criterion = $("criterion").value;
    const trip = {};
    for (const side of ["upper", "lower", "surface"]) {
      if (values["trip-" + side] !== undefined) {
        trip[side] = values["trip-" + side];
      }
    }
    if (Object.keys(trip).length) {
      transition.trip = trip;
    } else {
      delete transition.trip;
    }
    doc.transition = transition;
    doc.laminar = Object.assign(
      {},
      typeof doc.laminar === "object" && doc.laminar ? doc.laminar : {},
      { method: $("laminar-method").value },
    );
    return doc;
  }

  async function post(path, body, accept) {
    return fetch(path, {
      method: "POST",
      headers: { "Content-Type": "application/json", Accept: accept },
      body: JSON.stringify(body),
    });
  }

  // The data's members of a case: read from the CSV by the service, or the case file's.
  async function dataMembers() {
    if (source() === "case") {
      if (!baseCase) {
        showError("case-file", "Choose a case file first (or run the demonstration case).");
        return null;
      }
      return baseCase;
    }
    const text = $("csv-text").value;
    if (!text.trim()) {
      showError("csv-text", "Paste a CSV table or upload a CSV file first.");
      return null;
    }
    const problem = csvProblem(text);
    if (problem) {
      showError("csv-text", "The CSV table cannot be used: " + problem + ".");
      return null;
    }
    const response = await post("/v1/cases/csv", { text: text }, "application/json");
    if (!response.ok) {
      await showProblem(response);
      return null;
    }
    const members = await response.json();
    const count = members.pressure[Object.keys(members.pressure).find((k) => members.pressure[k])];
    $("data-status").textContent =
      "CSV table read: " + (count ? count.length : 0) + " points" +
      (members.surface.s ? ", one surface (s)." : ", a contour (x, y).");
    return members;
  }

  // ------------------------------------------------------------------ CSV check

  // The check of a CSV table made before it is sent: the mistakes people make most (no
  // header for a quantity, a cell that is not a number, a short row), said in the words of
  // the service's reader (`ibl run taps.csv`), which reads the table and stays the authority
  // on everything else. Checking here keeps such mistakes from becoming failed requests.
  const DELIMITERS = [",", ";", "\t"];
  const PRESSURES = ["cp", "edge_velocity", "p"];
  // Python's float() syntax, which the reader uses.
  const NUMBER = /^\s*[+-]?((((\d(_?\d)*)?\.\d(_?\d)*)|(\d(_?\d)*\.?))([eE][+-]?\d(_?\d)*)?|inf|infinity|nan)\s*$/i;

  function splitRow(line, sep) {
    const cells = [];
    let cell = "";
    let quoted = false;
    let start = true;
    for (let i = 0; i < line.length; i += 1) {
      const c = line[i];
      if (quoted) {
        if (c === '"' && line[i + 1] === '"') {
          cell += '"';
          i += 1;
        } else if (c === '"') {
          quoted = false;
        } else {
          cell += c;
        }
      } else if (c === sep) {
        cells.push(cell);
        cell = "";
        start = true;
        continue;
      } else if (start && c === " ") {
        continue;
      } else if (start && c === '"') {
        quoted = true;
      } else {
        cell += c;
      }
      start = false;
    }
    cells.push(cell);
    return cells;
  }

  function csvProblem(text) {
    const lines = text
      .replace(/^\ufeff/, "")
      .split(/\r\n|\r|\n/)
      .map((line, i) => [i + 1, line])
      .filter(([, line]) => line.trim() && !line.trimStart().startsWith("#"));
    if (!lines.length) {
      return "empty CSV file";
    }
    let sep = ",";
    for (const d of DELIMITERS) {
      if (splitRow(lines[0][1], d).length > splitRow(lines[0][1], sep).length) {
        sep = d;
      }
    }
    const header = splitRow(lines[0][1], sep).map((name) => name.trim());
    const keys = header.map((name) => name.replace(/\s+/g, "").toLowerCase());
    const holds = header.map((name) => "'" + name + "'").join(", ");
    const columns = {};
    if (keys.includes("x") && keys.includes("y")) {
      columns.x = keys.indexOf("x");
      columns.y = keys.indexOf("y");
    } else if (keys.includes("s")) {
      columns.s = keys.indexOf("s");
    } else {
      return "the header has no column for x and y (or s); it holds " + holds;
    }
    const pressure = PRESSURES.find((q) => keys.includes(q));
    if (!pressure) {
      return "the header has no column for the pressure (cp, edge_velocity or p); it holds " + holds;
    }
    columns[pressure] = keys.indexOf(pressure);
    if (keys.includes("radius")) {
      columns.radius = keys.indexOf("radius");
    }
    let rows = 0;
    for (const [number, line] of lines.slice(1)) {
      const row = splitRow(line, sep);
      if (!row.some((cell) => cell.trim())) {
        continue;
      }
      if (
        row.length !== header.length &&
        (row.length < header.length || row.slice(header.length).some((c) => c.trim()))
      ) {
        return "line " + number + ": " + row.length + " values, expected " + header.length;
      }
      for (const [quantity, column] of Object.entries(columns)) {
        let cell = row[column].trim();
        if (sep !== "," && cell.includes(",") && !cell.includes(".")) {
          cell = cell.replace(",", ".");
        }
        if (!NUMBER.test(cell)) {
          return (
            "line " + number + ": column '" + header[column] + "' (" + quantity +
            ") value '" + row[column] + "' is not a number"
          );
        }
      }
      rows += 1;
    }
    return rows ? null : "no data rows under the header";
  }

  // ------------------------------------------------------------------ results

  function fmt(value) {
    if (value === null || value === undefined) {
      return "\u2013";
    }
    if (typeof value !== "number") {
      return String(value);
    }
    return Math.abs(value) >= 1e-3 && Math.abs(value) < 1e5
      ? String(Number(value.toPrecision(4)))
      : value.toExponential(3);
  }

  function cell(row, text, header) {
    const node = document.createElement(header ? "th" : "td");
    if (header) {
      node.scope = header;
    }
    node.textContent = text;
    row.appendChild(node);
  }

  function where(event) {
    return event ? fmt(event.s) : "none";
  }

  function showEvents(result, unit) {
    const table = $("events");
    const head = table.tHead;
    head.textContent = "";
    const titles = [
      "Side",
      "Transition at s [" + unit + "]",
      "Cause of transition",
      "Re\u03b8 at transition [\u2013]",
      "Laminar separation at s [" + unit + "]",
      "Bubble (Owen & Klanfer)",
      "Separation at s [" + unit + "]",
      "Separated layer",
      "Pressure plateau in the data from s [" + unit + "]",
      "Last station s [" + unit + "]",
    ];
    const headRow = head.insertRow();
    for (const title of titles) {
      cell(headRow, title, "col");
    }
    const body = table.tBodies[0];
    body.textContent = "";
    for (const side of result.sides) {
      const row = body.insertRow();
      const t = side.transition;
      const ls = side.laminar_separation;
      const sep = side.separation;
      const last = Array.isArray(side.s) && side.s.length ? side.s[side.s.length - 1] : null;
      cell(row, side.name, "row");
      cell(row, where(t));
      cell(row, t ? t.cause.replace(/_/g, " ") : "\u2013");
      cell(row, t ? fmt(t.re_theta) : "\u2013");
      cell(row, where(ls));
      cell(row, ls ? ls.bubble : "\u2013");
      cell(row, where(sep));
      cell(row, sep ? sep.regime : "\u2013");
      cell(row, side.pressure_plateau ? fmt(side.pressure_plateau.s) : "none");
      cell(row, fmt(last));
    }
    $("events-caption").textContent =
      "Where the boundary layer of each side goes turbulent or separates. s is measured " +
      "along the surface from the stagnation point (contour), or as in the data (one " +
      "surface), in " + (unit === "m" ? "metres" : "the unit of the coordinates") + ".";
  }

  function showWarnings(result) {
    const list = $("warnings");
    list.textContent = "";
    const warnings = result.warnings || [];
    if (!warnings.length) {
      const item = document.createElement("li");
      item.textContent = "No warnings.";
      list.appendChild(item);
    }
    for (const warning of warnings) {
      const item = document.createElement("li");
      const code = document.createElement("code");
      code.textContent = warning.code;
      item.appendChild(code);
      item.appendChild(
        document.createTextNode(
          " " + warning.message + (warning.pointer ? " (at " + warning.pointer + ")" : ""),
        ),
      );
      list.appendChild(item);
    }
  }

  async function showFigure(doc) {
    const response = await post("/v1/analyses/figure", doc, "image/svg+xml");
    if (!response.ok) {
      await showProblem(response);
      return;
    }
    const blob = new Blob([await response.arrayBuffer()], { type: "image/svg+xml" });
    if (figureUrl) {
      URL.revokeObjectURL(figureUrl);
    }
    figureUrl = URL.createObjectURL(blob);
    $("figure").src = figureUrl;
  }

  function save(blob, name) {
    const link = document.createElement("a");
    link.href = URL.createObjectURL(blob);
    link.download = name;
    document.body.appendChild(link);
    link.click();
    link.remove();
    setTimeout(() => URL.revokeObjectURL(link.href), 10000);
  }

  // ------------------------------------------------------------------ running

  async function run() {
    clearErrors();
    $("run-status").textContent = "Analysing\u2026";
    $("run").disabled = true;
    $("results").hidden = true; // no result of other inputs stays on view
    try {
      const members = await dataMembers();
      const doc = members && buildCase(members);
      if (!doc) {
        $("run-status").textContent = "Not analysed: see the messages above.";
        return;
      }
      // One case through the batch endpoint: a case the service refuses comes back as the
      // problem in its entry of a 200 answer, shown here like any other message.
      const response = await post("/v1/analyses/batch", { cases: [doc] }, "application/json");
      if (!response.ok) {
        await showProblem(response);
        $("run-status").textContent = "Not analysed: see the messages above.";
        return;
      }
      const result = (await response.json()).results[0];
      if (!result || !Array.isArray(result.sides)) {
        showProblemDocument(result, "/cases/0");
        $("run-status").textContent = "Not analysed: see the messages above.";
        return;
      }
      lastResultText = JSON.stringify(result, null, 1) + "\n";
      lastCase = doc;
      const unit = lengthUnit(flowMode());
      $("result-name").textContent =
        (result.name ? "Case: " + result.name + ". " : "") +
        "Lengths in " + (unit === "m" ? "metres." : "the unit of the coordinates.");
      showEvents(result, unit);
      showWarnings(result);
      $("results").hidden = false;
      await showFigure(doc);
      $("run-status").textContent = "Done: " + result.sides.length + (result.sides.length === 1 ? " side" : " sides") + " analysed.";
    } catch (error) {
      showError("general-error", "The service could not be reached: " + error.message);
      $("run-status").textContent = "";
    } finally {
      $("run").disabled = false;
    }
  }

  async function runDemo() {
    clearErrors();
    const response = await fetch("/page/demo-case.json");
    if (!response.ok) {
      showError("general-error", "The demonstration case is not available.");
      return;
    }
    baseCase = await response.json();
    baseLabel = "Demonstration case: " + (baseCase.name || "(unnamed)");
    setSource("case");
    fillForm(baseCase);
    $("data-status").textContent = baseLabel + ".";
    await run();
  }

  function readFile(input, then) {
    const file = input.files && input.files[0];
    if (!file) {
      return;
    }
    const reader = new FileReader();
    reader.onload = () => then(file.name, String(reader.result));
    reader.onerror = () => showError(input.id, "The file " + file.name + " could not be read.");
    reader.readAsText(file);
  }

  function loadCaseFile(name, text) {
    clearErrors();
    let doc;
    try {
      doc = JSON.parse(text);
    } catch (error) {
      showError("case-file", name + " is not a JSON case document: " + error.message);
      baseCase = null;
      return;
    }
    if (!doc || typeof doc !== "object" || Array.isArray(doc)) {
      showError("case-file", name + " is not a case document: it must be a JSON object.");
      baseCase = null;
      return;
    }
    baseCase = doc;
    baseLabel = "Case file " + name + (doc.name ? ": " + doc.name : "");
    fillForm(doc);
    $("data-status").textContent = baseLabel + ".";
  }

  function start() {
    for (const radio of document.querySelectorAll("input[name=source]")) {
      radio.addEventListener("change", () => {
        setSource(source());
        $("data-status").textContent = source() === "case" && baseCase ? baseLabel + "." : "";
      });
    }
    for (const radio of document.querySelectorAll("input[name=flow-mode]")) {
      radio.addEventListener("change", () => setFlowMode(flowMode()));
    }
    $("csv-file").addEventListener("change", () =>
      readFile($("csv-file"), (name, text) => {
        $("csv-text").value = text;
        $("data-status").textContent = "CSV file " + name + " loaded.";
      }),
    );
    $("case-file").addEventListener("change", () => readFile($("case-file"), loadCaseFile));
    $("case-form").addEventListener("submit", (event) => {
      event.preventDefault();
      run();
    });
    $("demo").addEventListener("click", () => runDemo());
    $("download-json").addEventListener("click", () => {
      if (lastResultText) {
        save(new Blob([lastResultText], { type: "application/json" }), "ibl-result.json");
      }
    });
    $("download-csv").addEventListener("click", async () => {
      if (!lastCase) {
        return;
      }
      clearErrors();
      const response = await post("/v1/analyses/table", lastCase, "text/csv");
      if (!response.ok) {
        await showProblem(response);
        return;
      }
      save(new Blob([await response.arrayBuffer()], { type: "text/csv" }), "ibl-stations.csv");
    });
    setSource(source());
    setFlowMode(flowMode());
  }

  start();
})();

// The workbench page in a real headless Chromium, against the running release binary.
//
// Starts `ringdrag` on a free loopback port with an API key configured, opens /workbench,
// checks that the page asks for the key, types it, fills a design, runs a force curve, a
// stroke and a sizing, and checks what the page shows (numbers equal to the service's JSON
// answer to three significant figures, plots drawn), that a bad field is marked beside the
// field, and that /docs/ shows the API reference with no network. Keeps screenshots under
// target/ (workbench.png, docs.png) for a reviewer.
//
// Run by .ci/run (which installs Debian's chromium and playwright-core):
//   NODE_PATH=target/browser-test/node_modules node .ci/browser-test.cjs
// Environment: RINGDRAG_BIN (default target/release/ringdrag), CHROMIUM (default
// /usr/bin/chromium). Prints "browser: N passed, M failed" and exits non-zero on a failure.
"use strict";

const { chromium } = require("playwright-core");
const { spawn } = require("node:child_process");
const fs = require("node:fs");
const os = require("node:os");
const path = require("node:path");
const readline = require("node:readline");

const root = path.resolve(__dirname, "..");
const binary = process.env.RINGDRAG_BIN || path.join(root, "target/release/ringdrag");
const executablePath = process.env.CHROMIUM || "/usr/bin/chromium";
const outDir = path.join(root, "target");
const KEY = "4b8e2f6a1c9d37e5f0a2b6c8d4e17f93";

let passed = 0;
let failed = 0;
function check(name, ok, detail) {
  if (ok) {
    passed += 1;
    console.log(`ok   ${name}`);
  } else {
    failed += 1;
    console.log(`FAIL ${name}${detail ? ": " + detail : ""}`);
  }
}

/** Starts the service; resolves with its base URL and the child process. */
function startService() {
  const env = { ...process.env };
  for (const k of Object.keys(env)) if (k.startsWith("RINGDRAG_")) delete env[k];
  const child = spawn(binary, ["--listen", "127.0.0.1:0", "--api-keys", KEY], {
    env,
    stdio: ["ignore", "pipe", "ignore"],
  });
  return new Promise((resolve, reject) => {
    const timer = setTimeout(() => reject(new Error("the service did not start in 30 s")), 30000);
    child.on("exit", (code) => reject(new Error(`the service exited with ${code}`)));
    readline.createInterface({ input: child.stdout }).on("line", (line) => {
      const m = line.match(/^ringdrag listening on (http:\/\/\S+)/);
      if (m) {
        clearTimeout(timer);
        resolve({ base: m[1], child });
      }
    });
  });
}

/** Three significant figures, as the page shows them. */
function figure(v) {
  return String(Number(v.toPrecision(3)));
}

async function main() {
  const { base, child } = await startService();
  const profile = fs.mkdtempSync(path.join(os.tmpdir(), "ringdrag-chromium-"));
  const context = await chromium.launchPersistentContext(profile, {
    executablePath,
    headless: true,
    viewport: { width: 1440, height: 1100 },
    args: [
      "--headless",
      "--no-sandbox",
      "--disable-gpu",
      "--disable-quic",
      "--no-first-run",
      "--disable-background-networking",
      "--disable-component-update",
      "--disable-sync",
    ],
  });
  try {
    const page = context.pages()[0] || (await context.newPage());
    const consoleErrors = [];
    page.on("pageerror", (e) => consoleErrors.push(e.message));

    const response = await page.goto(base + "/workbench");
    check("the page is served", response && response.status() === 200);

    // Keys are configured: the material table needs one, and the page says so.
    await page.waitForFunction(() => document.getElementById("status").textContent.length > 0);
    const asked = await page.textContent("#status");
    check("without a key the page asks for it", /API key/.test(asked), asked);

    await page.fill("#api-key", KEY);
    await page.dispatchEvent("#api-key", "change");
    await page.waitForSelector("body[data-materials=loaded]", { timeout: 15000 });
    const materials = await page.$$eval("#material option", (o) => o.map((x) => x.value));
    check("materials come from /v1/materials", materials.includes("copper-c12200") && materials.length >= 12);

    // The design: a 12 x 20 mm N42 cylinder in a copper C12200 tube, bore 13 mm, wall 1.5 mm.
    await page.selectOption("#grade", "N42");
    await page.selectOption("#material", "copper-c12200");
    for (const [id, v] of [["#magnet-od", "12"], ["#magnet-length", "20"], ["#tube-id", "13"], ["#tube-wall", "1.5"], ["#tube-length", "300"]]) {
      await page.fill(id, v);
    }

    await page.click("#run-curve");
    await page.waitForSelector("#curve-plot[data-drawn=true]", { timeout: 30000 });
    const shownVt = await page.textContent('[data-figure="terminal_speed_m_per_s"]');
    const direct = await fetch(base + "/v1/force-curve", {
      method: "POST",
      headers: { "content-type": "application/json", authorization: "Bearer " + KEY },
      body: JSON.stringify({
        design: {
          magnets: { grade: "N42", outer_diameter_m: 0.012, inner_diameter_m: 0, length_m: 0.02, count: 1, polarity: "aligned" },
          tube: { material: "copper-c12200", inner_diameter_m: 0.013, wall_thickness_m: 0.0015, length_m: 0.3 },
          load: { payload_mass_kg: 0, incline_deg: 90 },
        },
      }),
    }).then((r) => r.json());
    check("the terminal speed shown is the service's", shownVt === figure(direct.terminal_speed_m_per_s), `${shownVt} vs ${direct.terminal_speed_m_per_s}`);
    const curveImg = await page.$eval("#curve-plot img", (img) => ({ w: img.naturalWidth, h: img.naturalHeight }));
    check("the force curve is drawn", curveImg.w >= 320 && curveImg.h > 100, JSON.stringify(curveImg));

    await page.click("#run-stroke");
    await page.waitForSelector("#stroke-plot[data-drawn=true]", { timeout: 30000 });
    const exit = Number(await page.textContent('[data-figure="exit_time_s"]'));
    check("the stroke's exit time is shown", exit > 0, String(exit));
    const strokeImg = await page.$eval("#stroke-plot img", (img) => img.naturalWidth);
    check("the stroke is drawn", strokeImg >= 320, String(strokeImg));

    await page.fill("#size-speed", "0.3");
    await page.click("#run-size");
    await page.waitForFunction(() => !document.getElementById("status").textContent.startsWith("Computing"), null, { timeout: 30000 });
    const sized = await page.textContent("#size-answer");
    check("sizing finishes without a problem", (await page.textContent("#status")) === "Sizing done.", await page.textContent("#status"));
    check("sizing answers with a wall in mm", /Smallest wall .* [0-9.]+ mm/.test(sized), sized);

    await page.screenshot({ path: path.join(outDir, "workbench.png"), fullPage: true });

    // A magnet wider than the bore: the problem is shown beside the field.
    await page.fill("#magnet-od", "14");
    await page.click("#run-curve");
    await page.waitForSelector(".field-error", { timeout: 15000 });
    const marked = await page.$eval("#magnet-od", (el) => el.getAttribute("aria-invalid"));
    check("a bad field is marked where it is typed", marked === "true");
    check("no script errors on the page", consoleErrors.length === 0, consoleErrors.join("; "));

    // The API reference, from the binary alone.
    await page.goto(base + "/docs/");
    await page.waitForSelector(".swagger-ui .info .title", { timeout: 20000 });
    const title = await page.textContent(".swagger-ui .info .title");
    check("the API reference shows the document", /ringdrag/.test(title), title);
    const operations = await page.$$eval(".opblock", (o) => o.length);
    check("the API reference lists the routes", operations >= 8, String(operations));
    await page.screenshot({ path: path.join(outDir, "docs.png") });
  } finally {
    await context.close();
    child.kill("SIGTERM");
    fs.rmSync(profile, { recursive: true, force: true });
  }
}

main()
  .catch((err) => {
    failed += 1;
    console.log(`FAIL the browser test stopped: ${err.stack || err}`);
  })
  .finally(() => {
    console.log(`browser: ${passed} passed, ${failed} failed`);
    process.exit(failed === 0 ? 0 : 1);
  });

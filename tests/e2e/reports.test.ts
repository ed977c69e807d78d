/**
 * Reports in Chromium against the real server and the demo seed: an operator writes a shift note
 * on the handover page of the running shift, the handover shows it, its PDF downloads and opens
 * (text read back with poppler-utils' pdftotext, page 1 rendered to PNG with pdftoppm into
 * tests/artifacts/); a note written on a loop's page appears in its timeline, which ends with the
 * trends beside it and scrolls within their height; the worst-loops page
 * states its formula; a viewer sees no note form.
 */
import { execFileSync } from "node:child_process";
import fs from "node:fs";
import { describe, expect, it } from "vitest";
import { DEMO_PASSWORD } from "@/lib/data/seed";
import { artifactPath } from "../setup/browser";
import { openSignedIn, setUpServerSuite } from "../helpers/server-suite";

const suite = setUpServerSuite({ seed: true, browser: { width: 1440, height: 1000 } });

describe("reports in Chromium", () => {
  it("an operator writes a shift note, the handover shows it, and its PDF downloads and opens", async () => {
    const page = await openSignedIn(suite, "operator@vantrell.example", DEMO_PASSWORD, "/reports/handover?shift=current");
    await expect.poll(() => page.getByRole("heading", { level: 1 }).textContent()).toContain("Shift in progress");
    await expect.poll(() => page.getByRole("note", { name: "Caution" }).count()).toBeGreaterThan(0);
    const text = `Feed pump B vibrating, fitter called ${Date.now().toString(36)}`;
    await page.getByRole("textbox", { name: /^Shift note/ }).fill(text);
    await page.getByRole("button", { name: "Add shift note" }).click();
    const notes = page.locator('[data-section="notes"]');
    await expect.poll(() => notes.textContent(), { timeout: 15_000 }).toContain(text);
    expect(await notes.textContent()).toContain("Tomas Brell");

    const [download] = await Promise.all([page.waitForEvent("download"), page.getByRole("link", { name: "Download PDF" }).click()]);
    const pdfPath = artifactPath("handover.pdf");
    await download.saveAs(pdfPath);
    expect(download.suggestedFilename()).toMatch(/^handover-.*\.pdf$/);
    const pdfText = execFileSync("pdftotext", ["-layout", pdfPath, "-"], { encoding: "utf8" }).replace(/\s+/g, " ");
    expect(pdfText).toContain(text);
    expect(pdfText).toContain("page 1 of");
    expect(pdfText).toContain("Vantrell");
    const pngBase = artifactPath("handover-page1");
    fs.rmSync(`${pngBase}.png`, { force: true });
    execFileSync("pdftoppm", ["-png", "-r", "80", "-f", "1", "-l", "1", "-singlefile", pdfPath, pngBase]);
    const png = fs.readFileSync(`${pngBase}.png`);
    expect([...png.subarray(0, 8)]).toEqual([0x89, 0x50, 0x4e, 0x47, 0x0d, 0x0a, 0x1a, 0x0a]);
    expect(png.length).toBeGreaterThan(5_000);
    await page.screenshot({ path: artifactPath("handover-page.png"), fullPage: true });
    await page.close();
  });

  it("a note written on a loop's page appears in its timeline", async () => {
    const page = await openSignedIn(suite, "operator@vantrell.example", DEMO_PASSWORD);
    const r = await page.request.get(`${suite.srv.url}/api/loops`);
    const { loops } = (await r.json()) as { loops: { id: number; tag: string }[] };
    const loop = loops[0]!;
    await page.goto(`${suite.srv.url}/loops/${loop.id}`);
    const text = `Checked positioner on ${loop.tag}, air supply fine`;
    await page.getByRole("button", { name: "Write a note" }).click();
    await page.getByLabel("Note on this loop").fill(text);
    await page.getByRole("button", { name: "Add note" }).click();
    await expect.poll(() => page.getByTestId("loop-timeline").textContent(), { timeout: 15_000 }).toContain(text);
    // At 1440 px wide the timeline sits beside the trends and ends with them: it scrolls within
    // their height instead of stretching the row (no empty area below the trends).
    const box = async (sel: string) => (await page.locator(sel).boundingBox())!;
    const trends = await box('section[aria-label="Trends"]');
    const panel = await box('[data-testid="loop-timeline-panel"]');
    expect(panel.x).toBeGreaterThan(trends.x + trends.width - 1);
    expect(Math.abs(panel.y + panel.height - (trends.y + trends.height))).toBeLessThan(2);
    const list = await page.getByTestId("loop-timeline").evaluate((el) => ({ overflow: getComputedStyle(el).overflowY, bottom: el.getBoundingClientRect().bottom }));
    expect(list.overflow).toBe("auto");
    expect(list.bottom).toBeLessThanOrEqual(panel.y + panel.height + 1);
    await page.screenshot({ path: artifactPath("loop-detail-timeline.png"), fullPage: true });
    await page.close();
  });

  it("the worst-loops page states its formula; a viewer gets no note form on the handover", async () => {
    const page = await openSignedIn(suite, "viewer@vantrell.example", DEMO_PASSWORD, "/reports/worst-loops");
    await expect.poll(() => page.locator("main").textContent()).toContain("Score = 100 x (criticality / 3)");
    await page.screenshot({ path: artifactPath("worst-loops-page.png"), fullPage: true });
    await page.goto(`${suite.srv.url}/reports/fleet-health`);
    await expect.poll(() => page.locator("main").textContent()).toContain("Share of loops by diagnosis");
    await page.screenshot({ path: artifactPath("fleet-health-page.png"), fullPage: true });
    await page.goto(`${suite.srv.url}/reports/handover?shift=current`);
    await expect.poll(() => page.getByRole("heading", { level: 1 }).textContent()).toContain("Shift in progress");
    expect(await page.getByRole("button", { name: "Add shift note" }).count()).toBe(0);
    await page.close();
  });
});

/**
 * What the loop inventory import reads since it goes through lib/csv (every case here fails on the
 * reader before, which used csv-parse with commas only): semicolon files with decimal commas,
 * `sep=;`, tabs, UTF-16, trailing empty cells, and refusals worded by the shared layer. The values
 * each sheet was written from are the reference. Pure: no database.
 */
import { describe, expect, it } from "vitest";
import { parseInventoryCsv } from "@/lib/admin/inventory-csv";
import { inventoryFileText } from "@/lib/admin/inventory-file";

const SITE = "Brackwater Polymers North";

describe("inventory sheets the import now reads", () => {
  it("reads a semicolon file with decimal commas (a European spreadsheet's CSV)", () => {
    const { rows, issues } = parseInventoryCsv(`tag;site;kind;gain;ti;pv_hi\r\nFIC-1;${SITE};flow;0,35;1,5e1;120\r\nFIC-2;${SITE};flow;2;none;-0,5\r\n`);
    expect(issues).toEqual([]);
    expect(rows.map((r) => [r.tag, r.given.gainValue, r.given.tiValue, r.given.pvHi])).toEqual([
      ["FIC-1", 0.35, 15, 120],
      ["FIC-2", 2, null, -0.5],
    ]);
  });

  it("refuses decimal points and commas mixed in one semicolon file, naming both places", () => {
    const { rows, issues } = parseInventoryCsv(`tag;site;kind;gain;pv_hi\nA;${SITE};flow;0,35;1\nB;${SITE};flow;1.5;2\n`);
    expect(rows.map((r) => r.tag)).toEqual(["A"]);
    expect(issues).toEqual([{ line: 3, column: "gain", message: expect.stringMatching(/a decimal point here, a decimal comma at line 2, gain/) }]);
  });

  it("follows a spreadsheet's `sep=;` line and reads tab-separated sheets", () => {
    const semi = parseInventoryCsv(`sep=;\ntag;site;kind;description\nA-1;${SITE};flow;north rack, bay 3\n`);
    expect(semi.issues).toEqual([]);
    expect(semi.rows.map((r) => [r.line, r.tag, r.given.description])).toEqual([[3, "A-1", "north rack, bay 3"]]);
    const tab = parseInventoryCsv(`tag\tsite\tkind\tgain\nA-2\t${SITE}\tlevel\t1.25\n`);
    expect(tab.issues).toEqual([]);
    expect(tab.rows.map((r) => [r.tag, r.kind, r.given.gainValue])).toEqual([["A-2", "level", 1.25]]);
  });

  it("reads a file saved as UTF-16 (spreadsheet \"Unicode text\") with its byte order mark", async () => {
    const text = `tag\tsite\tkind\tunits\r\nTIC-9\t${SITE}\ttemperature\t°C\r\n`;
    const bytes = new Uint8Array([0xff, 0xfe, ...new Uint8Array(new Uint16Array([...text].map((c) => c.charCodeAt(0))).buffer)]);
    const { rows, issues } = parseInventoryCsv(await inventoryFileText(new Blob([bytes])));
    expect(issues).toEqual([]);
    expect(rows.map((r) => [r.tag, r.kind, r.given.units])).toEqual([["TIC-9", "temperature", "°C"]]);
  });

  it("reads a row whose extra cells beyond the header are empty, and skips a row of separators only", () => {
    const { rows, issues } = parseInventoryCsv(`tag,site,kind\nA,${SITE},flow,,\n,,\nB,${SITE},flow\n`);
    expect(issues).toEqual([]);
    expect(rows.map((r) => [r.line, r.tag])).toEqual([[2, "A"], [4, "B"]]);
  });
});

describe("inventory sheets the import refuses, worded by lib/csv, losing no other row", () => {
  it("a row longer than the header with a filled extra cell: a separator in an unquoted cell", () => {
    const { rows, issues } = parseInventoryCsv(`tag,site,kind,description\nA,${SITE},flow,north rack, bay 3\nB,${SITE},flow,south\n`);
    expect(rows.map((r) => r.tag)).toEqual(["B"]);
    expect(issues).toEqual([{ line: 2, column: null, message: expect.stringMatching(/^5 cells, the header has 4; a cell that holds the separator "," without quotes/) }]);
  });

  it("a column named twice, naming both columns", () => {
    const { rows, issues } = parseInventoryCsv(`tag,site,kind,gain,GAIN\nA,${SITE},flow,1,2\n`);
    expect(rows).toEqual([]);
    expect(issues).toEqual([{ line: 1, column: "gain", message: 'the column "gain" appears twice (columns 4 and 5).' }]);
  });

  it("a unit after a column's name (it would be ignored)", () => {
    const { rows, issues } = parseInventoryCsv(`tag,site,kind,telemetry_period_s [min]\nA,${SITE},flow,5\n`);
    expect(rows).toEqual([]);
    expect(issues).toEqual([{ line: 1, column: "telemetry_period_s", message: expect.stringMatching(/^has a unit \("min"\) in its name/) }]);
  });

  it("a stray quote: that row refused with its line and cell, the rows after it read", () => {
    const { rows, issues } = parseInventoryCsv(`tag,site,kind,description\nA,${SITE},flow,"5" pipe"\nB,${SITE},flow,8 in. line\n`);
    expect(rows.map((r) => [r.line, r.tag])).toEqual([[3, "B"]]);
    expect(issues).toEqual([{ line: 2, column: null, message: expect.stringMatching(/^cell 4 has text after its closing quote/) }]);
  });
});

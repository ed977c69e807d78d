/**
 * Records that span lines (a quoted cell holding line ends), the strict cell splitter and the
 * strict table of lib/csv, as the loop inventory import reads its sheet. Reference for the cells:
 * Python's standard csv module (excel dialect, `newline=''` so line ends inside quotes are kept),
 * an implementation independent of lib/csv. Line numbers are those an editor shows (common practice).
 */
import { execFileSync } from "node:child_process";
import { describe, expect, it } from "vitest";
import { CsvError, CsvTable, recordReader, splitStrictCells } from "@/lib/csv";
import { PYTHON } from "../helpers/python";

const python = (text: string): string[][] =>
  JSON.parse(execFileSync(PYTHON, ["-c", "import csv,io,sys,json; print(json.dumps(list(csv.reader(io.StringIO(sys.stdin.read(), newline='')))))"], { input: text }).toString()) as string[][];

function read(text: string): { cells: string[]; line: number }[] {
  const r = recordReader(text);
  const out: { cells: string[]; line: number }[] = [];
  for (let rec = r.next(); rec !== null; rec = r.next()) out.push({ cells: splitStrictCells(rec, ",", r.lineNo()), line: r.lineNo() });
  return out;
}

const thrown = (f: () => unknown): CsvError => {
  try {
    f();
  } catch (e) {
    if (e instanceof CsvError) return e;
    throw e;
  }
  throw new Error("no CsvError thrown");
};

describe("recordReader + splitStrictCells", () => {
  it("reads quoted cells over LF, CRLF and lone-CR line ends as Python's csv module does, each record on the line it starts", () => {
    const text = 'a,b,c\r\n1,"two\nlines",x\r\n2,"crlf\r\ninside","a, ""q"""\r\n3,"cr\ronly",\r4,"",last';
    expect(read(text).map((r) => r.cells)).toEqual(python(text));
    expect(read(text).map((r) => r.line)).toEqual([1, 2, 4, 6, 8]);
  });

  it("names the line where a quote left open to the end of the file starts", () => {
    const e = thrown(() => read('a,b\n1,2\n"3,4\n5,6\n'));
    expect([e.line, e.column]).toEqual([3, null]);
    expect(e.message).toMatch(/^Line 3: a quoted cell starts on this line and is not closed/);
  });

  it("a stray quote (not at a cell's start) opens no quoted cell: the record ends with its line", () => {
    const r = recordReader('a,5" pipe,"6"" bore" x\nb,"c\nd"\n');
    expect([r.next(), r.lineNo(), r.next(), r.lineNo(), r.next()]).toEqual(['a,5" pipe,"6"" bore" x', 1, 'b,"c\nd"', 2, null]);
  });

  it("allows blanks around a quoted cell and trims every cell", () => {
    expect(splitStrictCells(' x ,  "q, r"  ,"" ', ",", 1)).toEqual(["x", "q, r", ""]);
  });

  it("refuses a stray quote, naming the line and the cell (Python's csv module keeps such quotes as text; RFC 4180 does not allow them)", () => {
    for (const [line, cell, what] of [
      ['tag,5" pipe,x', 2, /quote inside text that is not quoted/],
      ['tag,"5" pipe,x', 2, /text after its closing quote/],
      ['tag,x,"a" "b"', 3, /second quote after its closing quote/],
    ] as const) {
      const e = thrown(() => splitStrictCells(line, ",", 7));
      expect([e.line, e.columnNo]).toEqual([7, cell]);
      expect(e.message).toMatch(what);
    }
  });
});

describe("CsvTable strict", () => {
  const spec = { required: ["tag", "kind"], optional: ["gain", "note"], expected: "tag, kind (gain, note optional)" };
  const rows = (strict: boolean, lines: string[]) => {
    const t = new CsvTable<string>({ ...spec, strict });
    return lines.map((l, i) => {
      try {
        return t.row(l, i + 1);
      } catch (e) {
        return (e as CsvError).message;
      }
    });
  };

  it("refuses an unknown column, a column named twice and a missing one, every fault of the header in `parts`", () => {
    const t = new CsvTable<string>({ ...spec, strict: true });
    const e = thrown(() => t.row("tag,gains,note,note", 1));
    expect(e.parts.map((p) => [p.line, p.column, p.columnNo])).toEqual([
      [1, "gains", 2],
      [1, "note", 4],
      [1, "kind", null],
    ]);
    expect(e.message).toMatch(/^Line 1: the column "gains" is not one this file takes.*appears twice \(columns 3 and 4\).*the header lacks kind/);
    // Not strict: the unknown column is ignored; the other two faults are reported together.
    const lax = thrown(() => new CsvTable<string>(spec).row("tag,gains,note,note", 1));
    expect(lax.parts.map((p) => p.column)).toEqual(["note", "kind"]);
  });

  it("keeps a short row and a `#` line from being read as something else; trailing empty cells hold nothing", () => {
    const lines = ["tag,kind,gain,note", "A,flow", "#3 pump,flow,1,x", "B,flow,2,,,"];
    expect(rows(true, lines)).toEqual([null, "Line 2: 2 cells, the header has 4.", ["#3 pump", "flow", "1", "x"], ["B", "flow", "2", "", "", ""]]);
    // Not strict (historian exports): the short row gets its optional cells empty, `#` is a comment.
    expect(rows(false, lines)).toEqual([null, ["A", "flow", "", ""], null, ["B", "flow", "2", "", "", ""]]);
  });
});

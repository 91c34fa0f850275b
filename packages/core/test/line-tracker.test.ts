import { describe, expect, it } from "vitest";
import { LineTracker } from "../src/csv/line-tracker.js";

/** Appends `pieces` to a tracker and returns it with the offset where each piece starts. */
function track(pieces: string[]): { lines: LineTracker; starts: number[] } {
  const lines = new LineTracker();
  const starts: number[] = [];
  for (const piece of pieces) {
    starts.push(lines.length);
    lines.append(piece);
  }
  return { lines, starts };
}

describe("line numbers of text read in pieces", () => {
  it("counts LF, CR and CRLF as one line end each, wherever the pieces break", () => {
    const text = "a\nb\r\nc\rd\n\ne";
    // Every way of cutting the text in two gives the same line numbers.
    for (let cut = 0; cut <= text.length; cut++) {
      const { lines } = track([text.slice(0, cut), text.slice(cut)]);
      expect([0, 2, 5, 7, 9, 10].map((offset) => lines.lineAt(offset))).toEqual([1, 2, 3, 4, 5, 6]);
    }
  });

  it("gives a record ending in a line end the line of its last character", () => {
    const { lines } = track(["x,y\r\n", "1,2\r\n3,", "4"]);
    expect(lines.lineEndingAt(5)).toBe(1);
    expect(lines.lineEndingAt(10)).toBe(2);
    // The last record has no line end: it ends on the line it is on.
    expect(lines.lineEndingAt(lines.length)).toBe(3);
  });

  it("keeps counting after the text before a record is dropped", () => {
    const { lines, starts } = track(["h\n1\n", "2\n3"]);
    lines.release(starts[1]);
    lines.append("\n4\n");
    expect(lines.lineAt(starts[1] + 2)).toBe(4);
    expect(lines.lineEndingAt(lines.length)).toBe(5);
    expect(String.fromCharCode(lines.codeAt(starts[1]))).toBe("2");
  });
});

import type { Board, BoardRow } from "@nightshift/aggregator";
import type { BoardPage, BoardQuery, BoardSortKey } from "./schemas.js";

const NUMERIC: ReadonlySet<BoardSortKey> = new Set(["rank", "trial", "mean", "std", "fit_s", "predict_s"]);

/**
 * The order a column sorts in when none is asked for: the score best first (its direction),
 * everything else ascending (rank 1 first, the quickest fits first).
 */
export function defaultOrder(sort: BoardSortKey, direction: "max" | "min"): "asc" | "desc" {
  if (sort === "mean") return direction === "max" ? "desc" : "asc";
  return "asc";
}

function compareRows(sort: BoardSortKey, descending: boolean): (a: BoardRow, b: BoardRow) => number {
  const sign = descending ? -1 : 1;
  return (a, b) => {
    if (NUMERIC.has(sort)) {
      const x = a[sort as "mean"];
      const y = b[sort as "mean"];
      // Rows without a value (failed, queued) stay below every row that has one, in either order.
      if (x === null || y === null) {
        if (x !== y) return x === null ? 1 : -1;
      } else if (x !== y) return sign * (x - y);
    } else {
      const x = a[sort as "family"];
      const y = b[sort as "family"];
      if (x !== y) return sign * (x < y ? -1 : 1);
    }
    return a.rank - b.rank;
  };
}

/**
 * One page of a board: rows of one family (or all), sorted by any column, sliced by offset
 * and limit. Ranks and ties stay those of the whole run, so a filtered page still says where
 * a trial stands overall.
 */
export function boardPage(board: Board, query: Pick<BoardQuery, "family" | "sort" | "order" | "limit" | "offset">): BoardPage {
  const families = [...new Set(board.rows.map((r) => r.family))].sort();
  const order = query.order ?? defaultOrder(query.sort, board.direction);
  let rows = query.family === undefined ? board.rows : board.rows.filter((r) => r.family === query.family);
  if (query.sort !== "rank" || order !== "asc") rows = [...rows].sort(compareRows(query.sort, order === "desc"));
  return {
    ...board,
    rows: rows.slice(query.offset, query.offset + query.limit),
    total: rows.length,
    offset: query.offset,
    limit: query.limit,
    sort: query.sort,
    order,
    families,
  };
}

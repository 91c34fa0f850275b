import { isInputError } from "@nightshift/core";
import { isStoreWriteError } from "@nightshift/store";
import "./commands-list.js";
import { runCli } from "./commands.js";

/** File-system refusals (POSIX errno names) that a user fixes by freeing or unlocking the disk. */
const DISK_ERRNOS = new Set(["ENOSPC", "EDQUOT", "EROFS", "EFBIG", "EACCES", "EPERM"]);

function diskFailure(error: unknown): string | undefined {
  if (isStoreWriteError(error)) return error.message;
  const { code, path } = error as { code?: unknown; path?: unknown };
  if (typeof code === "string" && DISK_ERRNOS.has(code) && typeof path === "string") {
    return `${path}: cannot write (${code}); the disk may be full or read-only. What is already stored is kept; run the same command again to resume once the disk is writable.`;
  }
  return undefined;
}

runCli(process.argv.slice(2)).then(
  (code) => {
    process.exitCode = code;
  },
  (error: unknown) => {
    const disk = diskFailure(error);
    if (isInputError(error)) {
      console.error(`nightshift: ${error.message}`);
      process.exitCode = 2;
    } else if (disk) {
      console.error(`nightshift: ${disk}`);
      process.exitCode = 1;
    } else {
      console.error(error);
      process.exitCode = 1;
    }
  },
);

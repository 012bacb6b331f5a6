/**
 * The subcommand this process runs (`ingest`, `serve`, ...), set by the CLI
 * before each action and read by the store's lock (owner.ts). A module of its
 * own, with no imports, so the CLI records the name without loading the store.
 */
let runningCommand: string | null = null;

/** Record the subcommand this process runs; the CLI calls it before each action. */
export function setCurrentCommand(name: string): void {
  runningCommand = name;
}

/** The subcommand recorded by the CLI, or null (a library caller). */
export function recordedCommand(): string | null {
  return runningCommand;
}

/** What a section of `npm run faults` is given and returns. */
export interface FaultEnv {
  /** A PostgreSQL server URL for the run, started on first use when it is the embedded one. */
  database(): Promise<string>;
  log(line: string): void;
}

export interface FaultFigure {
  name: string;
  value: number | string;
  /** The target in words, e.g. "30/30" or "0". */
  target?: string;
  /** Whether the value meets the target; absent for figures without one. */
  met?: boolean;
}

export interface FaultSection {
  /** Short id for `--only`, e.g. `hostile_rows`. */
  name: string;
  run(env: FaultEnv): Promise<FaultFigure[]>;
}

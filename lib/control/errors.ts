/** Two models or signals sampled at different periods were combined. */
export class PeriodMismatchError extends RangeError {
  constructor(t1: number, t2: number, what = "models") {
    super(`cannot combine ${what} sampled at different periods: T = ${t1} s and T = ${t2} s`);
    this.name = "PeriodMismatchError";
  }
}

/** An input was NaN or infinite. */
export class NonFiniteInputError extends RangeError {
  constructor(what: string) {
    super(`${what} must be finite`);
    this.name = "NonFiniteInputError";
  }
}

/** An argument violated a stated condition (the message names the condition). */
export class ControlArgumentError extends RangeError {
  constructor(message: string) {
    super(message);
    this.name = "ControlArgumentError";
  }
}

/** Re-sampling pole positions would alias: |arg z| * T2 / T1 > pi. */
export class AliasingError extends RangeError {
  constructor(message: string) {
    super(message);
    this.name = "AliasingError";
  }
}

/** Why an estimate cannot be formed from the data given. Mapped to HTTP 422 at the edge. */
export class EstimationError extends Error {
  constructor(
    readonly code: 'invalid-input' | 'too-few-rows' | 'singular',
    message: string,
  ) {
    super(message);
    this.name = 'EstimationError';
  }
}

/** An error that becomes an HTTP answer in our one error shape: `{error: {code, message, details}}`. */
export class ApiError extends Error {
  override readonly name = 'ApiError';
  constructor(
    readonly statusCode: number,
    readonly code: string,
    message: string,
    readonly details: unknown = null,
  ) {
    super(message);
  }
}

export interface ErrorBody {
  error: { code: string; message: string; details: unknown };
}

export function errorBody(code: string, message: string, details: unknown = null): ErrorBody {
  return { error: { code, message, details } };
}

/** An error the API may show to its caller: an HTTP status, a stable code and a readable message. */
export class AppError extends Error {
  constructor(
    readonly status: number,
    readonly code: string,
    message: string,
    readonly details?: unknown,
  ) {
    super(message);
    this.name = 'AppError';
  }
}

export class ValidationError extends AppError {
  constructor(message: string, details?: unknown) {
    super(400, 'validation', message, details);
  }
}

export class UnauthorizedError extends AppError {
  constructor(code = 'unauthorized', message = 'Sign in to continue.') {
    super(401, code, message);
  }
}

export class ForbiddenError extends AppError {
  constructor(message = 'Your role does not allow this.') {
    super(403, 'forbidden', message);
  }
}

export class NotFoundError extends AppError {
  constructor(what = 'Resource') {
    super(404, 'not-found', `${what} not found.`);
  }
}

export class ConflictError extends AppError {
  constructor(message: string, details?: unknown) {
    super(409, 'conflict', message, details);
  }
}

/**
 * Driftbench's password policy, shared by the server (which enforces it) and the forms (which
 * explain it before a round trip): at least 12 characters, at most 72 bytes in UTF-8 (bcrypt
 * reads no further, so a longer password would be silently cut), and not one of the passwords
 * people pick most often.
 */
import { z } from 'zod';
import { textProblem } from './text.js';

export const PASSWORD_MIN_CHARS = 12;
/** bcrypt hashes only the first 72 bytes of its input. */
export const PASSWORD_MAX_BYTES = 72;

/**
 * Passwords refused whatever their length: patterns that head every leaked-password tally,
 * stretched to 12 characters or more, and Driftbench's own words. Compared case-insensitively.
 * Our own short list (common practice, no source); a lab may lengthen it.
 */
export const COMMON_PASSWORDS: readonly string[] = [
  '123456789012',
  '1234567890123',
  '12345678901234',
  '123123123123',
  '111111111111',
  '000000000000',
  '121212121212',
  '123456123456',
  'qwertyuiopas',
  'qwertyuiop12',
  'qwerty123456',
  '1q2w3e4r5t6y',
  '1qaz2wsx3edc',
  'zaq12wsxcde3',
  'asdfghjkl123',
  'passwordpassword',
  'password1234',
  'password12345',
  'password123456',
  'password!234',
  'passw0rd1234',
  'p@ssw0rd1234',
  'p@ssword1234',
  'iloveyou1234',
  'letmein12345',
  'letmeinletmein',
  'welcome12345',
  'welcome123456',
  'administrator',
  'administrator1',
  'admin1234567',
  'adminadmin12',
  'changeme1234',
  'changemenow!',
  'trustno1trustno1',
  'sunshine1234',
  'football1234',
  'baseball1234',
  'princess1234',
  'monkey123456',
  'dragon123456',
  'superman1234',
  'starwars1234',
  'abcdefghijkl',
  'abcdef123456',
  'abc123abc123',
  'aaaaaaaaaaaa',
  'secret123456',
  'mypassword12',
  'mypassword123',
  'driftbench12',
  'driftbench123',
  'driftbench1234',
  'driftbench-admin',
  'driftbenchdriftbench',
];

const COMMON = new Set(COMMON_PASSWORDS.map((p) => p.toLowerCase()));

/** UTF-8 length of a string, without TextEncoder allocations for the common ASCII case. */
export function utf8Bytes(s: string): number {
  return new TextEncoder().encode(s).length;
}

/** Why `password` breaks the policy, or null when it is acceptable. */
export function passwordProblem(password: string): string | null {
  if ([...password].length < PASSWORD_MIN_CHARS)
    return `must be at least ${PASSWORD_MIN_CHARS} characters`;
  if (utf8Bytes(password) > PASSWORD_MAX_BYTES)
    return `must be at most ${PASSWORD_MAX_BYTES} bytes (about ${PASSWORD_MAX_BYTES} plain letters)`;
  const text = textProblem(password);
  if (text) return text;
  if (COMMON.has(password.toLowerCase()))
    return 'is one of the most common passwords; choose another';
  return null;
}

/** A new password as every route that sets one takes it. */
export const NewPassword = z.string().superRefine((p, ctx) => {
  const problem = passwordProblem(p);
  if (problem) ctx.addIssue({ code: 'custom', message: problem });
});

const passwordChangeFields = {
  currentPassword: z.string().min(1, 'is required').max(200),
  newPassword: NewPassword,
};

/** A change that keeps the same password changes nothing: the new one must differ. */
function checkNewDiffers(
  v: { currentPassword: string; newPassword: string },
  ctx: z.RefinementCtx,
): void {
  if (v.currentPassword && v.newPassword === v.currentPassword) {
    ctx.addIssue({
      code: 'custom',
      path: ['newPassword'],
      message: 'must differ from the current password',
    });
  }
}

/** `POST /api/auth/password`: change my own password. */
export const PasswordChange = z.strictObject(passwordChangeFields).superRefine(checkNewDiffers);
export type PasswordChange = z.infer<typeof PasswordChange>;

/**
 * The change-password form: the request's fields and the new password typed a second time, which
 * must match (the browser checks it; the request does not carry it).
 */
export const PasswordChangeForm = z
  .strictObject({ ...passwordChangeFields, repeat: z.string() })
  .superRefine(checkNewDiffers)
  .superRefine((v, ctx) => {
    if (v.repeat !== v.newPassword) {
      ctx.addIssue({ code: 'custom', path: ['repeat'], message: 'must match the new password' });
    }
  });

/** `POST /api/users/:id/password-reset`: an admin sets a temporary password the user must change. */
export const PasswordReset = z.strictObject({
  temporaryPassword: NewPassword,
});
export type PasswordReset = z.infer<typeof PasswordReset>;

// Form fields shared by sign-up, invitations, password reset and the account page.
import { z } from "zod";

export const NameSchema = z.string({ error: "Name is required" }).trim().min(1, "Name is required").max(80, "Name must be at most 80 characters");

export const EmailSchema = z
  .string({ error: "E-mail is required" })
  .trim()
  .min(1, "E-mail is required")
  .max(320, "E-mail is too long")
  .email("E-mail is not a valid address");

export const PasswordSchema = z
  .string({ error: "Password is required" })
  .min(10, "Password must be at least 10 characters")
  .max(200, "Password must be at most 200 characters");

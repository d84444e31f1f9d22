/**
 * The short caution carried by every surface (README, board, CLI banner, alert payload `notice`).
 * Kept in one place so every surface says the same thing.
 */
export const NOTICE =
  "Advisory only: streamfence alerts assist qualified, licensed operators and never replace the plant's safety systems, local procedures or codes.";

/** The one line for a download that failed, or null when electron-builder stopped for another reason. */
export function packagingFailure(output: string, electronVersion: string): string | null;

/** Types of scripts/security-headers.mjs (see there). */
export declare const PAGE_POLICY: string;
export declare const CONTENT_SECURITY_POLICY: string;
export declare const WORKER_POLICY: string;
export declare const SECURITY_HEADERS: Readonly<Record<string, string>>;

export class UserError extends Error { readonly exitCode: number; constructor(message: string, exitCode = 2) { super(message); this.name = 'UserError'; this.exitCode = exitCode; } }

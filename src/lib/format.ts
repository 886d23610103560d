/** Dates as people at the bench read them, in the workshop's own time zone. */
export function formatWhen(date: Date | string, timeZone: string): string {
	return new Intl.DateTimeFormat('en-GB', { dateStyle: 'medium', timeStyle: 'short', timeZone }).format(new Date(date));
}

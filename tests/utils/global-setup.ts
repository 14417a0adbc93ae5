// Placeholder replaced when the database test harness lands.
export default function setup(): void {}

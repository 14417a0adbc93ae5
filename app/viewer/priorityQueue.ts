/** A binary max-heap by `priority`: the level-of-detail walk pops the node that looks biggest on screen first. */
export class MaxHeap<T> {
  private items: { value: T; priority: number }[] = []

  get size(): number {
    return this.items.length
  }

  push(value: T, priority: number): void {
    const items = this.items
    items.push({ value, priority })
    let i = items.length - 1
    while (i > 0) {
      const parent = (i - 1) >> 1
      if (items[parent]!.priority >= priority) break
      items[i] = items[parent]!
      i = parent
    }
    items[i] = { value, priority }
  }

  pop(): { value: T; priority: number } | undefined {
    const items = this.items
    const top = items[0]
    const last = items.pop()
    if (top === undefined || last === undefined || items.length === 0) return top
    let i = 0
    for (;;) {
      const left = 2 * i + 1
      const right = left + 1
      let largest = i
      let largestPriority = last.priority
      if (left < items.length && items[left]!.priority > largestPriority) {
        largest = left
        largestPriority = items[left]!.priority
      }
      if (right < items.length && items[right]!.priority > largestPriority) largest = right
      if (largest === i) break
      items[i] = items[largest]!
      i = largest
    }
    items[i] = last
    return top
  }
}

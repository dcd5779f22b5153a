/**
 * A binary min-heap of timed items, ordered by time, then rank, then insertion order, so equal
 * times always come out the same way (the simulator must be deterministic).
 */
export interface Timed {
  atUs: number;
  rank: number;
}

export interface TimeQueue<T extends Timed> {
  push(item: T): void;
  peek(): T | undefined;
  pop(): T | undefined;
  readonly size: number;
}

export function createTimeQueue<T extends Timed>(): TimeQueue<T> {
  const heap: Array<{ item: T; order: number }> = [];
  let inserted = 0;
  const less = (a: { item: T; order: number }, b: { item: T; order: number }) =>
    a.item.atUs !== b.item.atUs ? a.item.atUs < b.item.atUs : a.item.rank !== b.item.rank ? a.item.rank < b.item.rank : a.order < b.order;

  return {
    push(item) {
      heap.push({ item, order: inserted++ });
      let i = heap.length - 1;
      while (i > 0) {
        const parent = (i - 1) >> 1;
        if (!less(heap[i]!, heap[parent]!)) break;
        [heap[i], heap[parent]] = [heap[parent]!, heap[i]!];
        i = parent;
      }
    },
    peek() {
      return heap[0]?.item;
    },
    pop() {
      const top = heap[0];
      if (!top) return undefined;
      const last = heap.pop()!;
      if (heap.length > 0) {
        heap[0] = last;
        let i = 0;
        for (;;) {
          const l = 2 * i + 1;
          const r = l + 1;
          let smallest = i;
          if (l < heap.length && less(heap[l]!, heap[smallest]!)) smallest = l;
          if (r < heap.length && less(heap[r]!, heap[smallest]!)) smallest = r;
          if (smallest === i) break;
          [heap[i], heap[smallest]] = [heap[smallest]!, heap[i]!];
          i = smallest;
        }
      }
      return top.item;
    },
    get size() {
      return heap.length;
    },
  };
}

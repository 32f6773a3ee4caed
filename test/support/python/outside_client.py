"""An outside Kafka client for Shoal's tests: librdkafka (confluent-kafka) and pyarrow, not kafkajs.

produce BROKERS TOPIC ROWS SEED [CODEC]: write ROWS events as Arrow IPC stream messages of 100 rows,
    compressed by the producer with CODEC (zstd by default), plus one such message that is not Arrow.
read BROKERS TOPIC ROWS: read the scores topic until ROWS rows arrived, decode each message with pyarrow,
    and print one JSON object: the rows, the distinct ids, the column names and types.
"""
import json
import random
import sys

import pyarrow as pa
from confluent_kafka import Consumer, Producer

ARROW = [("content-type", b"application/vnd.apache.arrow.stream")]


def produce(brokers, topic, rows, seed, codec):
    rng = random.Random(seed)
    producer = Producer({"bootstrap.servers": brokers, "compression.type": codec, "linger.ms": 5})
    for start in range(0, rows, 100):
        n = min(100, rows - start)
        f1 = [10 * rng.random() for _ in range(n)]
        f2 = [10 * rng.random() for _ in range(n)]
        f3 = [10 * rng.random() for _ in range(n)]
        table = pa.table(
            {
                "id": [f"py-{codec}-{start + i}" for i in range(n)],
                "f1": f1,
                "f2": f2,
                "f3": f3,
                "label": ["1" if a + b <= 8 else "0" for a, b in zip(f1, f2)],
            }
        )
        sink = pa.BufferOutputStream()
        with pa.ipc.new_stream(sink, table.schema) as writer:
            writer.write_table(table)
        producer.produce(topic, sink.getvalue().to_pybytes(), headers=ARROW)
    producer.produce(topic, f"{codec}-compressed bytes that are not Arrow".encode(), headers=ARROW)
    if producer.flush(30) != 0:
        sys.exit("messages were not delivered")


def read(brokers, topic, rows):
    # check.crcs: librdkafka verifies each record batch's CRC-32C, which kafkajs wrote with Shoal's.
    consumer = Consumer(
        {
            "bootstrap.servers": brokers,
            "group.id": f"py-reader-{topic}",
            "auto.offset.reset": "earliest",
            "check.crcs": True,
        }
    )
    consumer.subscribe([topic])
    tables = []
    seen = 0
    misses = 0
    while seen < rows and misses < 120:
        message = consumer.poll(1.0)
        if message is None:
            misses += 1
            continue
        if message.error():
            sys.exit(str(message.error()))
        table = pa.ipc.open_stream(message.value()).read_all()
        tables.append(table)
        seen += table.num_rows
    consumer.close()
    table = pa.concat_tables(tables)
    print(
        json.dumps(
            {
                "rows": table.num_rows,
                "ids": len(set(table.column("id").to_pylist())),
                "columns": {f.name: str(f.type) for f in table.schema},
                "probabilitySums": [
                    round(a + b, 9) for a, b in zip(table.column("p_0").to_pylist(), table.column("p_1").to_pylist())
                ][:5],
            }
        )
    )


if __name__ == "__main__":
    if sys.argv[1] == "produce":
        produce(sys.argv[2], sys.argv[3], int(sys.argv[4]), int(sys.argv[5]), (sys.argv[6:] or ["zstd"])[0])
    else:
        read(sys.argv[2], sys.argv[3], int(sys.argv[4]))

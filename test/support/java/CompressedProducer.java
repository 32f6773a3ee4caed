import java.io.DataInputStream;
import java.io.FileInputStream;
import java.nio.charset.StandardCharsets;
import java.util.ArrayList;
import java.util.List;
import java.util.Properties;
import java.util.concurrent.Future;
import org.apache.kafka.clients.producer.KafkaProducer;
import org.apache.kafka.clients.producer.ProducerRecord;
import org.apache.kafka.clients.producer.RecordMetadata;
import org.apache.kafka.common.serialization.ByteArraySerializer;

/**
 * An outside Kafka client for Shoal's tests: Apache Kafka's own Java producer (kafka-clients, with
 * snappy-java and lz4-java from the broker's classpath), run with the JDK's source launcher:
 *
 *   java -cp 'KAFKA_LIB/*' CompressedProducer.java BROKERS TOPIC CODEC FILE
 *
 * FILE holds message values, each a 32-bit big-endian length and that many bytes; each is sent as one
 * message with the Arrow stream content type, compressed by the producer with CODEC (snappy, lz4, ...).
 * Batches of up to 256 KiB, so a snappy batch holds several of snappy-java's 32 KiB chunks and an lz4
 * batch several 64 KiB blocks.
 */
public class CompressedProducer {
  public static void main(String[] args) throws Exception {
    List<byte[]> values = new ArrayList<>();
    try (DataInputStream in = new DataInputStream(new FileInputStream(args[3]))) {
      while (in.available() > 0) {
        byte[] value = new byte[in.readInt()];
        in.readFully(value);
        values.add(value);
      }
    }
    Properties p = new Properties();
    p.put("bootstrap.servers", args[0]);
    p.put("compression.type", args[2]);
    p.put("batch.size", "262144");
    p.put("linger.ms", "50");
    p.put("acks", "all");
    try (KafkaProducer<byte[], byte[]> producer =
        new KafkaProducer<>(p, new ByteArraySerializer(), new ByteArraySerializer())) {
      List<Future<RecordMetadata>> sent = new ArrayList<>();
      for (byte[] value : values) {
        ProducerRecord<byte[], byte[]> record = new ProducerRecord<>(args[1], value);
        record.headers().add("content-type", "application/vnd.apache.arrow.stream".getBytes(StandardCharsets.UTF_8));
        sent.add(producer.send(record));
      }
      producer.flush();
      // A send the broker refused (a batch it could not decompress, for one) fails here, not silently.
      for (Future<RecordMetadata> f : sent) f.get();
    }
    System.out.println(values.size());
  }
}

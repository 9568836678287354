using System.Runtime.InteropServices;
using System.Text;
using System.Text.RegularExpressions;
using TopicGroups.Core.Vectors;

namespace TopicGroups.Benchmarks;

/// <summary>
/// Loads a C-ordered little-endian float32 .npy matrix (NPY format 1.0-3.0, numpy.lib.format) straight into one
/// float[]: enough for benchmark inputs written by numpy.save; the CLI has the full reader with its error messages.
/// </summary>
internal static partial class NpyMatrix
{
    public static EmbeddingMatrix Load(string path)
    {
        using var stream = File.OpenRead(path);
        using var reader = new BinaryReader(stream);
        byte[] magic = reader.ReadBytes(6);
        if (magic[0] != 0x93 || Encoding.ASCII.GetString(magic, 1, 5) != "NUMPY")
        {
            throw new InvalidDataException($"{path}: not a .npy file");
        }

        byte major = reader.ReadByte();
        reader.ReadByte();
        int headerLength = major == 1 ? reader.ReadUInt16() : (int)reader.ReadUInt32();
        string header = Encoding.Latin1.GetString(reader.ReadBytes(headerLength));
        Match shape = ShapePattern().Match(header);
        if (!header.Contains("'<f4'") || header.Contains("True") || !shape.Success)
        {
            throw new InvalidDataException($"{path}: need a C-ordered '<f4' matrix; header {header.Trim()}");
        }

        int rows = int.Parse(shape.Groups[1].Value);
        int columns = int.Parse(shape.Groups[2].Value);
        float[] values = new float[checked(rows * columns)];
        stream.ReadExactly(MemoryMarshal.AsBytes(values.AsSpan()));
        return new EmbeddingMatrix(values, rows, columns);
    }

    [GeneratedRegex(@"'shape': \((\d+), (\d+)\)")]
    private static partial Regex ShapePattern();
}

using TopicGroups.Cli.Output;
using TopicGroups.Cli.Tests.TestSupport;

namespace TopicGroups.Cli.Tests.Output;

// Quoting per RFC 4180 §2: fields with commas, double quotes or line breaks are enclosed in double
// quotes, and a double quote inside is escaped by preceding it with another double quote.
public sealed class CsvAssignmentsWriterTests
{
    [Fact]
    public void Write_Assignments_HeaderThenOneRowPerDocumentInOrder()
    {
        var writer = new StringWriter();

        CsvAssignmentsWriter.Write(writer, SampleResponses.TwoGroups());
        string[] rows = writer.ToString().Split("\r\n");

        Assert.Equal("id,group,similarity,margin,outlier,runner_up_group,runner_up_similarity", rows[0]);
        Assert.Equal("\"d,\"\"1\"\"\",1,0.95,0.5,false,2,0.45", rows[1]);
        Assert.Equal("p-1,2,0.9,0.25,false,1,0.65", rows[2]);
        Assert.Equal("d-3,1,0.3,0,true,2,0.3", rows[5]);
        Assert.Equal("", rows[6]); // the last row ends with CRLF too
        Assert.Equal(7, rows.Length);
    }

    [Theory]
    [InlineData("plain", "plain")]
    [InlineData("a,b", "\"a,b\"")]
    [InlineData("say \"hi\"", "\"say \"\"hi\"\"\"")]
    [InlineData("two\nlines", "\"two\nlines\"")]
    [InlineData("cr\rhere", "\"cr\rhere\"")]
    [InlineData("", "")]
    public void Field_SpecialCharacters_QuotedPerRfc4180(string value, string expected)
    {
        Assert.Equal(expected, CsvAssignmentsWriter.Field(value));
    }
}

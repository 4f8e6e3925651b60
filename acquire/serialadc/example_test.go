package serialadc_test

import (
	"fmt"

	"github.com/sweeplock/sweeplock/acquire/serialadc"
)

func ExampleCRC16() {
	fmt.Printf("%#04x\n", serialadc.CRC16([]byte("123456789")))
	// Output: 0x29b1
}

func ExampleBinaryDecoder() {
	var stream []byte
	stream, _ = serialadc.AppendPacket(stream, 0, 2, 2, []int32{512, 100, 530, 90})
	stream = append(stream, 0x00, 0x13, 0x37) // line noise
	stream, _ = serialadc.AppendPacket(stream, 5, 2, 2, []int32{601, 42})

	d, _ := serialadc.NewBinaryDecoder(2, serialadc.FrameSinkFunc(func(f *serialadc.Frame) {
		fmt.Println(f.Values, "gap:", f.Gap, "lost:", f.Lost)
	}))
	d.Write(stream)
	st := d.Stats()
	fmt.Println("garbage bytes:", st.Garbage, "sequence gaps:", st.SeqGaps)
	// Output:
	// [512 100] gap: false lost: 0
	// [530 90] gap: false lost: 0
	// [601 42] gap: true lost: 3
	// garbage bytes: 3 sequence gaps: 1
}

func ExampleTextDecoder() {
	opt := serialadc.TextOptions{
		Channels:   []string{"resp", "ref"},
		Timestamps: true,
		CountsMin:  0,
		CountsMax:  1023,
		IntervalUS: 1000,
	}
	d, _ := serialadc.NewTextDecoder(opt, serialadc.FrameSinkFunc(func(f *serialadc.Frame) {
		fmt.Println(f.TimeUS, f.Values, "gap:", f.Gap)
	}))
	d.Write([]byte("t_us,ref,resp\r\n4294966000,100,512\r\n4294967000,90,530\r\n704,80,547\r\n2704,70,560\r\n3704,60,570\r\n"))
	fmt.Println("timestamp jumps:", d.Stats().TimeJumps)
	// Output:
	// 4294966000 [512 100] gap: false
	// 4294967000 [530 90] gap: false
	// 4294968000 [547 80] gap: false
	// 4294970000 [560 70] gap: true
	// 4294971000 [570 60] gap: false
	// timestamp jumps: 1
}
